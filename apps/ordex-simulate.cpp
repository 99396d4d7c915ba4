// ordex-simulate: the nonlinear plant flown open loop or with a gain schedule, once or as a
// seeded Monte Carlo batch (lib/nonlinear/simulate.hpp; docs/nonlinear.md).
#include <cstdio>
#include <filesystem>
#include <iostream>

#include "common/front_end.hpp"
#include "common/job_options.hpp"
#include "io/csv.hpp"
#include "io/errors.hpp"
#include "model/model_file.hpp"
#include "nonlinear/simulate.hpp"

using namespace ordex;

namespace {

void write_run_csv(const std::string& path, const RunSummary& r, const SimulateReport& rep) {
  std::vector<std::string> header{"t"};
  header.insert(header.end(), rep.state_names.begin(), rep.state_names.end());
  header.insert(header.end(), rep.input_names.begin(), rep.input_names.end());
  CsvWriter csv(path, header);
  for (std::size_t k = 0; k < r.times.size(); ++k) {
    std::vector<double> row{r.times[k]};
    const Eigen::Index i = static_cast<Eigen::Index>(k);
    for (Eigen::Index j = 0; j < r.states.cols(); ++j) row.push_back(r.states(i, j));
    for (Eigen::Index j = 0; j < r.inputs.cols(); ++j) row.push_back(r.inputs(i, j));
    csv.row(row);
  }
  csv.commit();
}

}  // namespace

int main(int argc, char** argv) {
  return ordex::run_app("ordex-simulate", [&] {
    CommonOptions c;
    SimulateFlags f;
    po::options_description desc("Options");
    add_common_options(desc, c, "output times per run (the CSV rows), equally spaced, ends included (default 101)");
    add_simulate_options(desc, f, /*in_sweep=*/false);
    po::variables_map vm;
    if (!parse_command_line(argc, argv, desc, vm, "ordex-simulate",
            "ordex-simulate --model PATH [--dx0 V] [--gains PATH] [--disperse PATH --runs N --seed S] [options]",
            "Integrates a nonlinear model (a model file with [dynamics] and [nominal]) from x_n(t0) + dx0, open loop "
            "or closed with a gain schedule, and compares the final deviation with the linear prediction "
            "Phi_cl(t1, t0) dx0 of its linearization. --json: x_final, dx_final, peak_deviation, peak_input, cost, "
            "linear_gap (one run) or runs and statistics; --csv: t,<states>,<inputs> per run (a folder of "
            "run_00001.csv ... when there are several runs). Exit status: 0 done (failed runs are recorded), 2 bad "
            "input, 3 numerical failure."))
      return 0;
    NonlinearSetup s = nonlinear_setup_from_common(c);
    const SystemInfo& info = s.model.info();
    const bool csv_folder = f.runs > 1 && !c.csv.empty();
    if (csv_folder && c.csv == "-") throw InputError("--csv: several runs need a folder, not -");
    SimulateOptions o;
    o.from = s.t0;
    o.to = s.t1;
    o.samples = c.samples;
    o.propagation = s.propagation;
    std::vector<std::string> files = info.files_read;
    apply_simulate_flags(f, info, /*in_sweep=*/false, o, files);
    check_output_paths({c.json, csv_folder ? std::string() : c.csv}, files);
    o.keep_histories = !c.csv.empty();
    if (csv_folder) {
      std::error_code ec;
      std::filesystem::create_directories(c.csv, ec);
      if (ec || !std::filesystem::is_directory(c.csv))
        throw InputError("--csv " + c.csv + ": cannot use it as the folder of the runs' CSV files");
    }
    SummaryOutput json(c.json);
    const SimulateReport rep = simulate(s.model, o);
    json.write(with_app("ordex-simulate", rep.to_json()));
    if (!c.csv.empty()) {
      for (const RunSummary& r : rep.runs) {
        if (!r.ok) continue;
        if (!csv_folder) {
          write_run_csv(c.csv, r, rep);
          continue;
        }
        char name[32];
        std::snprintf(name, sizeof name, "run_%05d.csv", r.index + 1);
        write_run_csv((std::filesystem::path(c.csv) / name).string(), r, rep);
      }
    }
    json.commit();
    if (report_to_stdout(c)) {
      std::cout << rep.brief();
      if (rep.closed_loop) std::cout << kHardwareCaution << "\n";
    }
    return 0;
  }, simulate_flag_names(/*in_sweep=*/false));
}
