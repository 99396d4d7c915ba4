// ordex-regulate: finite-horizon time-varying LQR (CONTRACT.md), the regulator job of
// lib/riccati/regulator.hpp: flags to RegulatorOptions, then the gain schedule and summary out.
#include <iostream>

#include "common/front_end.hpp"
#include "common/hdf5_output.hpp"
#include "common/job_options.hpp"
#include "io/errors.hpp"
#include "riccati/regulator.hpp"

using namespace ordex;

namespace {
const FlagNames& kFlags = regulate_flag_names();
}  // namespace

int main(int argc, char** argv) {
  return run_app("ordex-regulate", [&] {
    CommonOptions common;
    RegulateFlags flags;
    std::string p_csv, run_csv, hdf5;
    RegulatorOptions o;
    po::options_description desc("Options");
    add_common_options(desc, common, "equally spaced times of the gain schedule (CSV rows), ends included");
    add_regulate_options(desc, flags, o);
    desc.add_options()
        ("p-csv", po::value(&p_csv)->value_name("PATH"), "also write P(t) on the --samples grid: t,P_1_1,...")
        ("response-csv", po::value(&run_csv)->value_name("PATH"), "with --x0: the closed-loop run on the --samples "
         "grid, t,<states>,<inputs> (absent when the check failed)");
    add_hdf5_option(desc, hdf5, "the gain schedule on the --samples grid: t, K (samples x m x n) and P (samples x n x n)");
    po::variables_map vm;
    if (!parse_command_line(argc, argv, desc, vm, "ordex-regulate",
            "ordex-regulate --model PATH [--weights PATH] [--x0 V] [options]",
            "Finite-horizon linear-quadratic regulator for x' = A(t)x + B(t)u: minimizes x(t1)'Qf x(t1) + int "
            "(x'Qx + 2x'Nu + u'Ru) dt through the Riccati differential equation solved backwards from t1, and gives "
            "the gain schedule K(t) = R^-1 (B'P + N') of u = -K(t)x (--csv: t,K_1_1,...,K_m_n; the summary's "
            "gain_schedule). The regulator is then checked in closed loop (its transition matrix, Floquet "
            "multipliers of a periodic plant and, with --x0, the simulated run and cost).\n"
            "Exit status: 0 done; also 0 when the closed-loop check fails (a stiff plant, a step budget spent): the "
            "gain schedule is written, one line 'ordex-regulate: warning: ...' goes to standard error and the "
            "summary has closed_loop.status = \"failed\" with the reason. 2 bad input, 3 numerical failure of "
            "the Riccati solve."))
      return 0;
    AppSetup setup = setup_from_common(common);
    require_forward_window(setup);
    const System& sys = *setup.system;
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
    o.keep_schedule = !(common.json.empty() && common.csv.empty() && p_csv.empty());
    const RegulatorReport r = regulate(sys, setup.t0, setup.t1, o);
    if (!common.csv.empty()) write_gain_schedule_csv(common.csv, r);
    if (!p_csv.empty()) write_riccati_csv(p_csv, r);
    if (!run_csv.empty() && r.closed_loop.run) write_closed_loop_csv(run_csv, r);
    Json summary = with_app("ordex-regulate", r.to_json());
    summary["caution"] = kHardwareCaution;
    json.write(summary);
    h5.attributes(summary, "/", {"gain_schedule"});
    h5.commit();
    json.commit();
    if (r.closed_loop.status == ClosedLoopCheck::Status::Failed)
      std::cerr << "ordex-regulate: warning: the closed-loop check failed (" << with_flag_names(r.closed_loop.reason, kFlags)
                << "); the gain schedule is written" << (run_csv.empty() || r.closed_loop.run ? "" : ", --response-csv is not") << std::endl;
    if (report_to_stdout(common)) std::cout << r.brief() << kHardwareCaution << "\n";
    return 0;
  }, kFlags);
}
