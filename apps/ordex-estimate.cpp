// ordex-estimate: the Kalman-Bucy filter and covariance analysis (CONTRACT.md), the estimation
// job of lib/estimation/estimate.hpp: flags to EstimationOptions, then the gain schedule, the
// sigma history and the summary out.
#include <iostream>

#include "common/front_end.hpp"
#include "estimation/estimate.hpp"
#include "estimation/periodic_estimate.hpp"
#include "io/errors.hpp"

using namespace ordex;

namespace {
const FlagNames kFlags = {{"EstimationOptions::samples", "--samples"},
                          {"EstimationOptions::dense_intervals", "--dense"},
                          {"EstimationOptions::noise", "--noise"},
                          {"RiccatiOptions::solver", "--solver"},
                          {"PeriodicOptions::periodicity_tolerance", "--periodic-tol"}};
}  // namespace

int main(int argc, char** argv) {
  return run_app("ordex-estimate", [&] {
    CommonOptions common;
    std::string noise, measurements, solver, sigma_csv;
    EstimationOptions o;
    PeriodicOptions periodic;
    po::options_description desc("Options");
    add_common_options(desc, common, "equally spaced times of the gain schedule and sigma history, ends included");
    desc.add_options()
        ("noise", po::value(&noise)->value_name("PATH"), "noise file (TOML, required): Qn, the process noise "
         "intensity, entering through the model inputs listed in `through` or an explicit `G` (else on every "
         "state); Rn, the measurement noise intensity of the outputs (for the filter); P0, the initial covariance. "
         "Matrices as lists of rows or flat lists meaning diagonals; Qn, G, Rn entries may be expressions of t")
        ("measurements", po::value(&measurements)->value_name("PATH"), "sensor schedule (TOML, [[measurement]] "
         "tables: outputs, times or every, Rn): a covariance analysis with discrete Joseph-form updates at those "
         "times instead of the continuous filter")
        ("solver", po::value(&solver)->value_name("NAME")->default_value("ode"), "route that gives the results: "
         "ode (the covariance equation with CVODE BDF, or with --method auto an explicit Runge-Kutta 7(8) pair on a "
         "lightly damped oscillating plant; --method adams or bdf forces that scheme) or hamiltonian (the engine, --method, on the "
         "linear-fractional form); the other route runs as a cross-check")
        ("no-cross-check", "skip the second route (no agreement in the summary)")
        ("periodic", "the periodic steady-state filter (a model with a period): the stabilizing periodic solution "
         "of the filter's Riccati equation over one period from --from (--to is not used; P0 of the noise file is "
         "not used), its gain L(t) and the Floquet multipliers of A - L C. Exit 3 when none exists (the message "
         "names the multiplier the outputs cannot see)")
        ("periodic-tol", po::value(&periodic.periodicity_tolerance)->value_name("TOL")->default_value(1e-6, "1e-6"),
         "with --periodic: largest relative gap between P(t0) and P after one period")
        ("dense", po::value(&o.dense_intervals)->value_name("N")->default_value(2000), "least number of intervals "
         "of the hamiltonian route's grid over the window")
        ("sigma-csv", po::value(&sigma_csv)->value_name("PATH"), "standard deviation of each state over time: "
         "t,sigma_<state>,... (in a covariance analysis two rows at each update time: before and after)");
    po::variables_map vm;
    if (!parse_command_line(argc, argv, desc, vm, "ordex-estimate",
            "ordex-estimate --model PATH --noise PATH [--measurements PATH | --periodic] [options]",
            "State estimation for x' = A(t)x + B(t)u + G w, y = C(t)x + v. Without --measurements: the Kalman-Bucy "
            "filter, P' = AP + PA' + G Qn G' - P C' Rn^-1 C P forward from P0, and its gain schedule L(t) = "
            "P C' Rn^-1 (--csv: t,L_1_1,...,L_n_p, states by outputs). With --measurements: a covariance analysis, "
            "P propagated with process noise alone between the scheduled measurements and updated in Joseph form at "
            "them (--csv: the update gains, one row per update, zero columns for outputs not measured). The summary "
            "(--json) has P_final, L0 and sigma_final.\n"
            "Exit status: 0 done (also when only the cross-check fails: one warning line on standard error "
            "and cross_check.status = \"failed\" in the summary), 2 bad input (naming the file and key), 3 "
            "numerical failure."))
      return 0;
    if (noise.empty()) throw InputError("--noise is required (the noise file: Qn, Rn, P0)");
    const bool is_periodic = vm.count("periodic") > 0;
    if (is_periodic && !measurements.empty())
      throw InputError("--periodic and --measurements: the periodic steady state is the continuous filter's; "
                       "give one of them");
    AppSetup setup = setup_from_common(common);
    if (is_periodic && !setup.system->info().period)
      throw InputError(setup.system->info().source +
                       ": --periodic needs a model with a period ([system] period); this one declares none");
    if (!is_periodic) require_forward_window(setup);
    const System& sys = *setup.system;
    check_output_paths({common.json, common.csv, sigma_csv}, run_inputs(sys, {noise, measurements}));
    o.noise = load_noise(noise, sys);
    if (!measurements.empty()) o.schedule = load_sensor_schedule(measurements, sys, setup.t0, setup.t1);
    o.solver = parse_solver(solver);
    o.cross_check = !vm.count("no-cross-check");
    o.propagation = setup.propagation;
    o.samples = common.samples;
    SummaryOutput json(common.json);
    const EstimationReport r =
        is_periodic ? estimate_periodic(sys, setup.t0, o, periodic) : estimate(sys, setup.t0, setup.t1, o);
    if (!common.csv.empty()) write_estimator_gain_csv(common.csv, r);
    if (!sigma_csv.empty()) write_sigma_csv(sigma_csv, r);
    Json summary = with_app("ordex-estimate", r.to_json());
    summary["caution"] = kHardwareCaution;
    json.write(summary);
    json.commit();
    if (!r.check_failure.empty())
      std::cerr << "ordex-estimate: warning: the cross-check by the other solver failed (" << r.check_failure
                << "); the results are written" << std::endl;
    if (report_to_stdout(common)) std::cout << r.brief() << kHardwareCaution << "\n";
    return 0;
  }, kFlags);
}
