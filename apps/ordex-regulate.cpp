// ordex-regulate: finite-horizon time-varying LQR and the periodic steady state (CONTRACT.md),
// the regulator jobs of lib/riccati/regulator.hpp and periodic_regulator.hpp: flags to
// RegulatorOptions, then the gain schedule and summary out.
#include <iostream>
#include <optional>

#include "common/front_end.hpp"
#include "common/hdf5_output.hpp"
#include "common/job_options.hpp"
#include "io/errors.hpp"
#include "model/input_selection.hpp"
#include "riccati/periodic_regulator.hpp"
#include "riccati/regulator.hpp"

using namespace ordex;

namespace {
const FlagNames& kFlags = regulate_flag_names();
}  // namespace

int main(int argc, char** argv) {
  return run_app("ordex-regulate", [&] {
    CommonOptions common;
    RegulateFlags flags;
    std::string p_csv, run_csv, hdf5, controls;
    PeriodicOptions periodic;
    RegulatorOptions o;
    po::options_description desc("Options");
    add_common_options(desc, common, "equally spaced times of the gain schedule (CSV rows), ends included");
    add_regulate_options(desc, flags, o);
    desc.add_options()
        ("periodic", "the periodic steady state (a model with a period): the stabilizing periodic solution of the "
         "Riccati equation from the stable subspace of the Hamiltonian's monodromy, the gain over one period from "
         "--from (--to is not used), and the closed-loop Floquet multipliers. Exit 3 when no stabilizing solution "
         "exists (the message names the multiplier the inputs cannot move)")
        ("periodic-tol", po::value(&periodic.periodicity_tolerance)->value_name("TOL")->default_value(1e-6, "1e-6"),
         "with --periodic: largest relative gap between P(t0) and P after one period back")
        ("controls", po::value(&controls)->value_name("NAMES"), "comma-separated input names that are controls "
         "(default: all inputs); R and N are then sized for these alone")
        ("p-csv", po::value(&p_csv)->value_name("PATH"), "also write P(t) on the --samples grid: t,P_1_1,...")
        ("response-csv", po::value(&run_csv)->value_name("PATH"), "with --x0: the closed-loop run on the --samples "
         "grid, t,<states>,<inputs> (absent when the check failed)");
    add_hdf5_option(desc, hdf5, "the gain schedule on the --samples grid: t, K (samples x m x n) and P (samples x n x n)");
    po::variables_map vm;
    if (!parse_command_line(argc, argv, desc, vm, "ordex-regulate",
            "ordex-regulate --model PATH [--weights PATH] [--x0 V] [--periodic] [--controls NAMES] [options]",
            "Finite-horizon linear-quadratic regulator for x' = A(t)x + B(t)u: minimizes x(t1)'Qf x(t1) + int "
            "(x'Qx + 2x'Nu + u'Ru) dt through the Riccati differential equation solved backwards from t1, and gives "
            "the gain schedule K(t) = R^-1 (B'P + N') of u = -K(t)x (--csv: t,K_1_1,...,K_m_n; the summary's "
            "gain_schedule). With --periodic, the gain that stabilizes a periodic plant for all time instead "
            "(docs/periodic.md). The regulator is then checked in closed loop (its transition matrix, Floquet "
            "multipliers of a periodic plant and, with --x0, the simulated run and cost).\n"
            "Exit status: 0 done; also 0 when the closed-loop check fails (a stiff plant, a step budget spent): the "
            "gain schedule is written, one line 'ordex-regulate: warning: ...' goes to standard error and the "
            "summary has closed_loop.status = \"failed\" with the reason. 2 bad input, 3 numerical failure of "
            "the Riccati solve (or no stabilizing periodic solution)."))
      return 0;
    const bool is_periodic = vm.count("periodic") > 0;
    AppSetup setup = setup_from_common(common);
    if (is_periodic && !setup.system->info().period)
      throw InputError(setup.system->info().source +
                       ": --periodic needs a model with a period ([system] period); this one declares none");
    if (!is_periodic) require_forward_window(setup);
    std::unique_ptr<InputSelection> selection;
    if (vm.count("controls"))
      selection = std::make_unique<InputSelection>(*setup.system, parse_input_names(*setup.system, controls, "--controls"));
    const System& sys = selection ? static_cast<const System&>(*selection) : *setup.system;
    const int n = sys.states(), m = sys.inputs();
    if (!run_csv.empty() && flags.x0.empty()) throw InputError("--response-csv needs --x0");
    check_output_paths({common.json, common.csv, p_csv, run_csv, hdf5}, run_inputs(sys, {flags.weights}));
    apply_regulate_flags(flags, vm, sys, setup, o);
    o.riccati.propagation.progress = progress_reporter("ordex-regulate");
    o.samples = common.samples;
    SummaryOutput json(common.json);
    Hdf5Output h5(hdf5);
    const int h5_t = h5.series("t"), h5_K = h5.series("K", m, n), h5_P = h5.series("P", n, n);
    if (h5)
      o.on_sample = [&](std::size_t, double t, const Eigen::MatrixXd& K, const Eigen::MatrixXd& P) {
        h5.append_value(h5_t, t);
        h5.append(h5_K, K);
        h5.append(h5_P, P);
      };
    o.keep_schedule = is_periodic || !(common.json.empty() && common.csv.empty() && p_csv.empty());
    std::optional<PeriodicRegulatorReport> pr;
    if (is_periodic) pr = regulate_periodic(sys, setup.t0, o, periodic);
    const RegulatorReport r = pr ? pr->regulator : regulate(sys, setup.t0, setup.t1, o);
    if (!common.csv.empty()) write_gain_schedule_csv(common.csv, r);
    if (!p_csv.empty()) write_riccati_csv(p_csv, r);
    if (!run_csv.empty() && r.closed_loop.run) write_closed_loop_csv(run_csv, r);
    Json summary = with_app("ordex-regulate", pr ? pr->to_json() : r.to_json());
    if (selection) summary["controls"] = sys.info().input_names;
    summary["caution"] = kHardwareCaution;
    json.write(summary);
    h5.attributes(summary, "/", {"gain_schedule"});
    h5.commit();
    json.commit();
    if (r.closed_loop.status == ClosedLoopCheck::Status::Failed)
      std::cerr << "ordex-regulate: warning: the closed-loop check failed (" << with_flag_names(r.closed_loop.reason, kFlags)
                << "); the gain schedule is written" << (run_csv.empty() || r.closed_loop.run ? "" : ", --response-csv is not") << std::endl;
    if (report_to_stdout(common)) std::cout << (pr ? pr->brief() : r.brief()) << kHardwareCaution << "\n";
    return 0;
  }, kFlags);
}
