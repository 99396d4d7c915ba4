// ordex-regulate: finite-horizon time-varying LQR (CONTRACT.md), the regulator job of
// lib/riccati/regulator.hpp: flags to RegulatorOptions, then the gain schedule and summary out.
#include <iostream>
#include <optional>

#include "common/front_end.hpp"
#include "io/errors.hpp"
#include "model/input_selection.hpp"
#include "riccati/periodic_regulator.hpp"
#include "riccati/regulator.hpp"

using namespace ordex;

namespace {
const FlagNames kFlags = {{"RegulatorOptions::x0", "--x0"}, {"RegulatorOptions::samples", "--samples"},
                          {"RegulatorOptions::check_max_steps", "--check-steps"}, {"RiccatiOptions::solver", "--solver"},
                          {"RiccatiOptions::dense_intervals", "--dense"},
                          {"PeriodicOptions::periodicity_tolerance", "--periodic-tol"}};
}  // namespace

int main(int argc, char** argv) {
  return run_app("ordex-regulate", [&] {
    CommonOptions common;
    std::string weights, solver, x0, p_csv, run_csv, controls;
    PeriodicOptions periodic;
    RegulatorOptions o;
    po::options_description desc("Options");
    add_common_options(desc, common, "equally spaced times of the gain schedule (CSV rows), ends included");
    desc.add_options()
        ("weights", po::value(&weights)->value_name("PATH"), "weights file (TOML) with Q, R, Qf and optional N: "
         "lists of rows, or flat lists meaning diagonals; entries numbers or expressions of t and the model's "
         "parameters, definitions and table columns. Default Q = I, R = I, Qf = 0, N = 0. Optional Qy (outputs x "
         "outputs): the cost y'Qy y with y = Cx + Du, added as C'QyC to Q, D'QyD to R and C'QyD to N")
        ("solver", po::value(&solver)->value_name("NAME")->default_value("ode"), "ode: the Riccati equation with "
         "CVODE BDF; hamiltonian: the engine (--method) propagates the Hamiltonian one interval at a time")
        ("x0", po::value(&x0)->value_name("V"), "initial state (comma-separated): simulate the closed loop "
         "u = -K(t)x and report the predicted and simulated cost and the final state")
        ("dense", po::value(&o.riccati.dense_intervals)->value_name("N")->default_value(2000), "least number of "
         "intervals on which P is stored (K(t) between them from the cubic Hermite interpolant of P)")
        ("check-steps", po::value(&o.check_max_steps)->value_name("N")->default_value(200000), "step budget of "
         "each part of the closed-loop check (a part that needs more is reported failed, never ground through)")
        ("no-check", "skip the closed-loop check (no closed-loop matrix, Floquet multipliers or simulated run)")
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
    po::variables_map vm;
    if (!parse_command_line(argc, argv, desc, vm, "ordex-regulate",
            "ordex-regulate --model PATH [--weights PATH] [--x0 V] [--periodic] [--controls NAMES] [options]",
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
    const bool is_periodic = vm.count("periodic") > 0;
    AppSetup setup = setup_from_common(common);
    if (is_periodic && !setup.system->info().period)
      throw InputError(setup.system->info().source + ": --periodic needs a model with a period ([system] period); this one declares none");
    if (!is_periodic) require_forward_window(setup);
    std::unique_ptr<InputSelection> selection;
    if (vm.count("controls"))
      selection = std::make_unique<InputSelection>(*setup.system, parse_input_names(*setup.system, controls, "--controls"));
    const System& sys = selection ? static_cast<const System&>(*selection) : *setup.system;
    const int n = sys.states();
    if (!run_csv.empty() && x0.empty()) throw InputError("--response-csv needs --x0");
    check_output_paths({common.json, common.csv, p_csv, run_csv}, run_inputs(sys, {weights}));
    if (vm.count("weights")) o.weights = load_weights(weights, sys);
    o.riccati.solver = parse_solver(solver);
    o.riccati.propagation = setup.propagation;
    o.riccati.propagation.progress = progress_reporter("ordex-regulate");
    o.samples = common.samples;
    o.check_closed_loop = !vm.count("no-check");
    if (vm.count("x0")) o.x0 = parse_vector(x0, n, "--x0");
    SummaryOutput json(common.json);
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
    json.commit();
    if (r.closed_loop.status == ClosedLoopCheck::Status::Failed)
      std::cerr << "ordex-regulate: warning: the closed-loop check failed (" << with_flag_names(r.closed_loop.reason, kFlags)
                << "); the gain schedule is written" << (run_csv.empty() || r.closed_loop.run ? "" : ", --response-csv is not") << std::endl;
    if (report_to_stdout(common)) std::cout << (pr ? pr->brief() : r.brief()) << kHardwareCaution << "\n";
    return 0;
  }, kFlags);
}
