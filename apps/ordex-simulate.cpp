// ordex-simulate: the nonlinear plant flown open loop or with a gain schedule, once or as a
// seeded Monte Carlo batch (lib/nonlinear/simulate.hpp; docs/nonlinear.md).
#include <cstdio>
#include <filesystem>
#include <iostream>

#include "common/front_end.hpp"
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
    std::string dx0, gains, u_min, u_max, disperse, disturbance;
    int runs = 1, threads = 0;
    unsigned long long seed = 1;
    po::options_description desc("Options");
    add_common_options(desc, c, "output times per run (the CSV rows), equally spaced, ends included (default 101)");
    desc.add_options()
        ("dx0", po::value(&dx0)->value_name("V"), "initial deviation from the nominal, comma-separated (default zero)")
        ("gains", po::value(&gains)->value_name("PATH"), "fly the closed loop u = u_n - K(t) (x - x_n) with the gain "
         "schedule of ordex-regulate (t,K_1_1,...,K_m_n; linear between rows); default open loop (u = u_n)")
        ("disturbance", po::value(&disturbance)->value_name("PATH"), "a disturbance input history (CSV: t and "
         "columns named after inputs, any of them; linear between rows, held outside) added to the input after the "
         "limits")
        ("u-min", po::value(&u_min)->value_name("V"), "lower input limits (saturation), one per input")
        ("u-max", po::value(&u_max)->value_name("V"), "upper input limits (saturation), one per input")
        ("disperse", po::value(&disperse)->value_name("PATH"), "dispersions (TOML): [initial_state] and [parameters], "
         "NAME = { sigma = S } (normal) or { half_width = H } (uniform), added to dx0 and the parameter values")
        ("runs", po::value(&runs)->value_name("N")->default_value(1), "runs (with --disperse)")
        ("seed", po::value(&seed)->value_name("S")->default_value(1), "seed of the batch; run k draws from its own "
         "stream of (S, k), whatever the number of threads")
        ("threads", po::value(&threads)->value_name("N")->default_value(0), "threads (0: the machine's cores, at most 2)");
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
    if (vm.count("runs") && runs > 1 && disperse.empty()) throw InputError("--runs: several runs need --disperse PATH");
    NonlinearSetup s = nonlinear_setup_from_common(c);
    const SystemInfo& info = s.model.info();
    const int n = static_cast<int>(info.state_names.size()), m = static_cast<int>(info.input_names.size());
    const bool csv_folder = runs > 1 && !c.csv.empty();
    if (csv_folder && c.csv == "-") throw InputError("--csv: several runs need a folder, not -");
    check_output_paths({c.json, csv_folder ? std::string() : c.csv}, [&] { std::vector<std::string> f = info.files_read; for (const auto& e : {gains, disperse, disturbance}) if (!e.empty()) f.push_back(e); return f; }());
    SimulateOptions o;
    o.from = s.t0;
    o.to = s.t1;
    o.samples = c.samples;
    o.propagation = s.propagation;
    if (!dx0.empty()) o.dx0 = parse_vector(dx0, n, "--dx0");
    if (!u_min.empty()) o.u_min = parse_vector(u_min, m, "--u-min", "inputs");
    if (!u_max.empty()) o.u_max = parse_vector(u_max, m, "--u-max", "inputs");
    if (!gains.empty()) o.gains = std::make_shared<const GainSchedule>(read_gain_schedule(gains, info));
    if (!disturbance.empty()) o.disturbance = std::make_shared<const SampledInput>(read_disturbance(disturbance, info));
    if (!disperse.empty()) o.dispersions = read_dispersions(disperse, info);
    o.runs = runs;
    o.seed = seed;
    o.threads = threads;
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
  }, {{"SimulateOptions::samples", "--samples"}, {"SimulateOptions::runs", "--runs"},
      {"SimulateOptions::threads", "--threads"}, {"SimulateOptions::dx0", "--dx0"},
      {"SimulateOptions::u_min", "--u-min"}, {"SimulateOptions::u_max", "--u-max"},
      {"SimulateOptions::gains", "--gains"}, {"SimulateOptions::from/to", "--from/--to"}});
}
