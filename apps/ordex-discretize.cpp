// ordex-discretize: the discrete-time model x_{k+1} = Phi_k x_k + Gamma_k u_k on a sample grid
// (CONTRACT.md "ordex-discretize"; CSV layout in docs/response.md). The work is in lib/response.
#include <filesystem>
#include <iostream>
#include <set>
#include <memory>

#include "common/front_end.hpp"
#include "io/errors.hpp"
#include "io/json.hpp"
#include "io/output_file.hpp"
#include "model/model_file.hpp"
#include "response/discretize.hpp"

int main(int argc, char** argv) {
  return ordex::run_app("ordex-discretize", [&] {
    namespace po = ordex::po;
    ordex::CommonOptions c;
    std::string hold = "zoh", step_text, times_path;
    po::options_description desc("Options");
    ordex::add_common_options(desc, c,
                              "grid of N equally spaced times in the window, both ends included, "
                              "when neither --step nor --times is given");
    desc.add_options()
        ("step", po::value(&step_text)->value_name("H"),
         "grid t0, t0+H, t0+2H, ... and t1 over the window (the last interval is shorter when H "
         "does not divide it); a number or an expression such as pi/50")
        ("times", po::value(&times_path)->value_name("PATH"),
         "grid from a file, one time a line, strictly increasing (replaces the window)")
        ("hold", po::value(&hold)->value_name("zoh|linear")->default_value("zoh"),
         "the input between samples: zoh gives gamma (x_{k+1} = phi x_k + gamma u_k); linear gives "
         "gamma0 and gamma1 (x_{k+1} = phi x_k + gamma0 u_k + gamma1 u_{k+1})")
        ("no-reuse", "integrate every interval even when every entry of the model is a constant "
                     "(otherwise equal-length intervals share one step)");
    po::variables_map vm;
    if (!ordex::parse_command_line(argc, argv, desc, vm, "ordex-discretize",
                                   "ordex-discretize --model PATH [--step H | --times PATH] [options]",
                                   "Writes the exact discrete-time model of x' = A(t) x + B(t) u on a grid "
                                   "of sample times, for an input held (zoh) or linear between samples: "
                                   "phi and gamma of every interval, as JSON (--json: times, phi, gamma or "
                                   "gamma0/gamma1, lists over the intervals) and CSV (--csv: one row an "
                                   "interval, k,t_start,t_end,phi_1_1..phi_n_n,gamma_1_1..; docs/response.md). "
                                   "Exit status: 0 done, 2 bad input, 3 numerical failure."))
      return 0;
    if (vm.count("step") && step_text.empty()) throw ordex::InputError("--step: empty value");
    if (vm.count("times") && times_path.empty()) throw ordex::InputError("--times: empty path");
    ordex::check_output_paths({c.json, c.csv});
    if (!step_text.empty() && !times_path.empty())
      throw ordex::InputError("--step and --times: give one of them, not both");
    const bool samples_given = vm.count("samples") > 0 && !vm["samples"].defaulted();
    if (samples_given && (!step_text.empty() || !times_path.empty()))
      throw ordex::InputError("--samples: not used with --step or --times (they set the grid)");
    if (!times_path.empty() && (!c.from.empty() || !c.to.empty()))
      throw ordex::InputError("--from/--to: not used with --times (the file sets the grid)");

    ordex::AppSetup s = ordex::setup_from_common(c, times_path.empty());
    ordex::DiscretizeOptions o;
    o.hold = ordex::parse_hold(hold);
    o.propagation = s.propagation;
    o.propagation.progress = ordex::terminal_progress("ordex-discretize");
    o.reuse_time_invariant = vm.count("no-reuse") == 0;
    std::vector<double> grid;
    if (!times_path.empty()) {
      grid = ordex::read_time_grid(times_path);
    } else {
      if (!(s.t0 < s.t1))
        throw ordex::InputError("--from/--to: the window must run forward (from " + ordex::format_number(s.t0) +
                                " to " + ordex::format_number(s.t1) + ")");
      grid = step_text.empty() ? s.samples
                               : ordex::step_grid(s.t0, s.t1, ordex::evaluate_constant(step_text, "--step"));
    }
    // The JSON temporary is opened before the work and committed after the CSV, so an error
    // leaves neither file behind.
    std::unique_ptr<ordex::OutputFile> json_out;
    if (!c.json.empty() && c.json != "-") json_out = std::make_unique<ordex::OutputFile>(c.json);
    ordex::DiscretizeReport rep = ordex::discretize(*s.system, grid, o);
    if (json_out) json_out->stream() << ordex::discretize_report_json(rep, *s.system).dump(2) << "\n";
    if (!c.csv.empty()) ordex::write_discrete_model_csv(c.csv, rep.model);
    if (json_out) json_out->commit();
    if (c.json == "-") ordex::write_json_file(c.json, ordex::discretize_report_json(rep, *s.system));
    if (ordex::report_to_stdout(c)) std::cout << ordex::discretize_report_text(rep, *s.system) << ordex::kHardwareCaution << "\n";
    return 0;
  });
}
