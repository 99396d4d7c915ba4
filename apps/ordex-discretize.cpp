// ordex-discretize: the discrete-time model x_{k+1} = Phi_k x_k + Gamma_k u_k on a sample grid
// (CONTRACT.md "ordex-discretize"; CSV layout in docs/response.md), the job of
// lib/response/discretize.hpp.
#include <iostream>

#include "common/front_end.hpp"
#include "common/hdf5_output.hpp"
#include "io/errors.hpp"
#include "model/model_file.hpp"
#include "model/model_report.hpp"
#include "response/discretize.hpp"

using namespace ordex;

int main(int argc, char** argv) {
  return run_app("ordex-discretize", [&] {
    CommonOptions c;
    std::string hold, step, times, hdf5;
    po::options_description desc("Options");
    add_common_options(desc, c, "grid of N equally spaced times in the window, both ends included, when neither "
                                "--step nor --times is given (default 101)");
    desc.add_options()
        ("step", po::value(&step)->value_name("H"), "grid t0, t0+H, t0+2H, ... and t1 over the window (the last "
         "interval is shorter when H does not divide it); a number or an expression such as pi/50")
        ("times", po::value(&times)->value_name("PATH"), "grid from a file, one time a line, strictly increasing "
         "(replaces the window)")
        ("hold", po::value(&hold)->value_name("zoh|linear")->default_value("zoh"), "the input between samples: zoh "
         "gives gamma (x_{k+1} = phi x_k + gamma u_k); linear gives gamma0 and gamma1 (x_{k+1} = phi x_k + "
         "gamma0 u_k + gamma1 u_{k+1})")
        ("no-reuse", "integrate every interval even when every entry of the model is a constant");
    add_hdf5_option(desc, hdf5, "t (grid times), phi (intervals x n x n) and gamma or gamma0/gamma1 (intervals x "
                    "n x m)");
    po::variables_map vm;
    if (!parse_command_line(argc, argv, desc, vm, "ordex-discretize",
            "ordex-discretize --model PATH [--step H | --times PATH] [options]",
            "Writes the exact discrete-time model of x' = A(t) x + B(t) u on a grid of sample times, for an input "
            "held (zoh) or linear between samples: phi and gamma of every interval, as JSON (--json: times, phi, "
            "gamma or gamma0/gamma1, lists over the intervals) and CSV (--csv: one row an interval, "
            "k,t_start,t_end,phi_1_1..phi_n_n,gamma_1_1..; docs/response.md) and HDF5 (--hdf5). Without --json "
            "the intervals go to --csv and --hdf5 as they are computed and are never all held in memory. "
            "Exit status: 0 done, 2 bad input, 3 numerical failure."))
      return 0;
    if (vm.count("step") && vm.count("times")) throw InputError("--step and --times: give one of them, not both");
    if (vm.count("samples") && (vm.count("step") || vm.count("times")))
      throw InputError("--samples: not used with --step or --times (they set the grid)");
    if (vm.count("times") && (!c.from.empty() || !c.to.empty()))
      throw InputError("--from/--to: not used with --times (the file sets the grid)");
    AppSetup s = setup_from_common(c, !vm.count("times"));
    check_output_paths({c.json, c.csv, hdf5}, run_inputs(*s.system, {times}));
    DiscretizeOptions o;
    o.hold = parse_hold(hold, "--hold");
    o.propagation = s.propagation;
    o.propagation.progress = progress_reporter("ordex-discretize");
    o.reuse_time_invariant = !vm.count("no-reuse");
    o.samples = c.samples;
    if (vm.count("step")) o.step = evaluate_constant(step, "--step");
    SummaryOutput json(c.json);
    // The CSV and HDF5 files take each interval as it is computed; only the JSON summary, which
    // lists every interval, needs them kept.
    const int n = s.system->states(), m = s.system->inputs();
    std::unique_ptr<DiscreteModelCsv> csv;
    if (!c.csv.empty()) csv = std::make_unique<DiscreteModelCsv>(c.csv, n, m, o.hold);
    Hdf5Output h5(hdf5);
    const int h5_phi = h5.series("phi", n, n);
    const int h5_g0 = h5.series(o.hold == Hold::Zoh ? "gamma" : "gamma0", n, m);
    const int h5_g1 = o.hold == Hold::Linear ? h5.series("gamma1", n, m) : -1;
    o.keep_steps = !c.json.empty();
    o.on_step = [&](std::size_t k, const StepMatrices& step) {
      if (csv) csv->row(k, step);
      h5.append(h5_phi, step.phi);
      h5.append(h5_g0, step.gamma0);
      if (h5_g1 >= 0) h5.append(h5_g1, step.gamma1);
    };
    const DiscretizeReport rep = vm.count("times") ? discretize(*s.system, read_time_grid(times), o)
                                                   : discretize(*s.system, s.t0, s.t1, o);
    const Json summary = with_app("ordex-discretize", rep.to_json());
    json.write(summary);
    h5.vector("t", rep.model.times);
    h5.attributes(summary, "/", {"times", "phi", "gamma", "gamma0", "gamma1"});
    if (csv) csv->commit();
    h5.commit();
    json.commit();
    if (report_to_stdout(c)) std::cout << rep.brief() << kHardwareCaution << "\n";
    return 0;
  }, {{"DiscretizeOptions::step", "--step"}, {"DiscretizeOptions::samples", "--samples"},
      {"discretize: the window", "--from/--to: the window"}});
}
