// ordex-linearize: the linearization of a nonlinear model about its nominal on a grid (CSV) and
// a tabulated model file reproducing it (lib/nonlinear/linearize.hpp; docs/nonlinear.md).
#include <filesystem>
#include <iostream>

#include "common/front_end.hpp"
#include "io/errors.hpp"
#include "model/model_file.hpp"
#include "nonlinear/linearize.hpp"

using namespace ordex;

int main(int argc, char** argv) {
  return ordex::run_app("ordex-linearize", [&] {
    CommonOptions c;
    std::string step, toml;
    po::options_description desc("Options");
    add_common_options(desc, c, "grid of N equally spaced times in the window, both ends included, when --step is "
                                "not given (default 101)");
    desc.add_options()
        ("step", po::value(&step)->value_name("H"), "grid t0, t0+H, ... and t1 (a number or an expression)")
        ("toml", po::value(&toml)->value_name("PATH"), "also write a model file whose [table] is the --csv file: "
         "loading it gives A, B, C, D at the grid times, linear between them (needs --csv PATH, not -)");
    po::variables_map vm;
    if (!parse_command_line(argc, argv, desc, vm, "ordex-linearize",
            "ordex-linearize --model PATH --csv PATH [--toml PATH] [options]",
            "Linearizes a nonlinear model (a model file with [dynamics] and [nominal]) about its nominal with exact "
            "Jacobians A = df/dx, B = df/du, C = dh/dx, D = dh/du, and writes the nominal and the matrices on a grid: "
            "--csv: t,<states>,<inputs>,A_1_1,...,A_n_n,B_1_1,...,C_1_1,...,D_1_1,... (row-major, 1-based); --json: "
            "the summary. Exit status: 0 done, 2 bad input, 3 numerical failure."))
      return 0;
    if (vm.count("samples") && vm.count("step")) throw InputError("--samples and --step: give one of them, not both");
    if (!toml.empty() && (c.csv.empty() || c.csv == "-")) throw InputError("--toml needs --csv PATH (a file, not -)");
    NonlinearSetup s = nonlinear_setup_from_common(c);
    check_output_paths({c.json, c.csv, toml}, s.model.info().files_read);
    LinearizeOptions o;
    o.samples = c.samples;
    if (vm.count("step")) o.step = evaluate_constant(step, "--step");
    SummaryOutput json(c.json);
    const LinearizeReport r = linearize(s.model, s.t0, s.t1, o);
    json.write(with_app("ordex-linearize", r.to_json()));
    if (!c.csv.empty()) write_linearization_csv(c.csv, r);
    if (!toml.empty())
      write_text_file(toml, tabulated_model_text(r, c.csv, std::filesystem::path(toml).parent_path().string()));
    json.commit();
    if (report_to_stdout(c)) std::cout << r.brief();
    return 0;
  }, {{"LinearizeOptions::samples", "--samples"}, {"LinearizeOptions::step", "--step"}});
}
