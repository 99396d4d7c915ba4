// ordex-regulate: finite-horizon time-varying LQR (CONTRACT.md). Solves the Riccati equation
// backwards over the window, writes the gain schedule, and checks the regulator in closed loop.
#include <filesystem>
#include <iostream>
#include <set>

#include "common/front_end.hpp"
#include "io/csv.hpp"
#include "io/errors.hpp"
#include "io/json.hpp"
#include "io/output_file.hpp"
#include "riccati/regulator.hpp"
#include "riccati/weights.hpp"

namespace {

const char* const kUsage = "ordex-regulate --model PATH [--weights PATH] [--x0 V] [options]";
const char* const kAbout =
    "Finite-horizon linear-quadratic regulator for x' = A(t)x + B(t)u: minimizes\n"
    "x(t1)'Qf x(t1) + int (x'Qx + 2x'Nu + u'Ru) dt by solving the Riccati differential equation\n"
    "backwards from t1, and gives the gain schedule K(t) = R^-1 (B'P + N') of u = -K(t) x.\n"
    "Standard output: P(t0), K(t0) and, with --x0, the predicted and simulated cost.\n"
    "--csv writes the gain schedule t,K_1_1,...,K_m_n on the --samples grid.\n"
    "Exit status: 0 done, 2 bad input, 3 numerical failure.";

}  // namespace

int main(int argc, char** argv) {
  return ordex::run_app("ordex-regulate", [&] {
    namespace po = boost::program_options;
    ordex::CommonOptions common;
    std::string weights_path, solver = "ode", x0_text, p_csv, response_csv;
    int dense = 2000;
    po::options_description desc("Options");
    ordex::add_common_options(desc, common, "equally spaced times of the gain schedule (CSV rows), ends included");
    desc.add_options()
        ("weights", po::value(&weights_path)->value_name("PATH"),
         "weights file (TOML) with Q, R, Qf and optional N: matrices as lists of rows, or flat lists "
         "meaning diagonals; entries numbers or expressions of t. Default Q = I, R = I, Qf = 0, N = 0")
        ("solver", po::value(&solver)->value_name("NAME")->default_value("ode"),
         "ode: the Riccati equation with CVODE BDF on the n(n+1)/2 entries of P; hamiltonian: the "
         "engine (--method) propagates the Hamiltonian one interval at a time (stepwise Davison-Maki)")
        ("x0", po::value(&x0_text)->value_name("V"),
         "initial state (comma-separated): simulate the closed loop u = -K(t)x and report the "
         "predicted and simulated cost and the final state")
        ("dense", po::value(&dense)->value_name("N")->default_value(2000),
         "least number of intervals on which P is stored; the controller's K(t) between them comes "
         "from the cubic Hermite interpolant of P")
        ("p-csv", po::value(&p_csv)->value_name("PATH"),
         "also write P(t) on the --samples grid: t,P_1_1,...,P_n_n")
        ("response-csv", po::value(&response_csv)->value_name("PATH"),
         "with --x0: write the closed-loop run on the --samples grid: t,<states>,<inputs>");
    po::variables_map vm;
    if (!ordex::parse_command_line(argc, argv, desc, vm, "ordex-regulate", kUsage, kAbout)) return 0;

    ordex::AppSetup setup = ordex::setup_from_common(common);
    const ordex::System& sys = *setup.system;
    const int n = sys.states(), m = sys.inputs();
    if (m < 1) throw ordex::InputError(common.model + ": the model has no inputs; a regulator needs B");
    if (vm.count("x0") && x0_text.empty()) throw ordex::InputError("--x0: empty vector");
    if (!response_csv.empty() && x0_text.empty()) throw ordex::InputError("--response-csv needs --x0");
    if (vm.count("weights") && weights_path.empty()) throw ordex::InputError("--weights: empty path");
    if (!weights_path.empty() && std::filesystem::is_directory(weights_path))
      throw ordex::InputError(weights_path + ": is a folder, not a weights file");
    ordex::check_output_paths({common.json, common.csv, p_csv, response_csv});
    ordex::Weights weights = weights_path.empty() ? ordex::default_weights(n, m)
                                                  : ordex::load_weights(weights_path, n, m);
    ordex::RegulatorOptions options;
    options.riccati.solver = ordex::parse_solver(solver);
    options.riccati.propagation = setup.propagation;
    options.riccati.propagation.progress = ordex::terminal_progress("ordex-regulate");
    options.riccati.dense_intervals = dense;
    if (!x0_text.empty()) options.x0 = ordex::parse_vector(x0_text, n, "--x0");

    ordex::RiccatiSolution solution;
    const ordex::RegulatorReport report = ordex::regulate(sys, weights, setup.samples, options, solution);

    // Every output is prepared first and committed last, so an error leaves none behind.
    std::unique_ptr<ordex::CsvWriter> gains_csv, riccati_csv, run_csv;
    if (!common.csv.empty()) {
      std::vector<std::string> header{"t"};
      for (const auto& name : ordex::matrix_column_names("K", m, n)) header.push_back(name);
      gains_csv = std::make_unique<ordex::CsvWriter>(common.csv, header);
      ordex::GainEvaluator gains(sys, weights, solution);
      Eigen::MatrixXd K(m, n);
      for (double t : setup.samples) {
        gains.K_at(t, K);
        std::vector<double> row{t};
        ordex::append_row_major(row, K);
        gains_csv->row(row);
      }
    }
    if (!p_csv.empty()) {
      std::vector<std::string> header{"t"};
      for (const auto& name : ordex::matrix_column_names("P", n, n)) header.push_back(name);
      riccati_csv = std::make_unique<ordex::CsvWriter>(p_csv, header);
      for (std::size_t k = 0; k < setup.samples.size(); ++k) {
        std::vector<double> row{setup.samples[k]};
        ordex::append_row_major(row, solution.P[solution.output_index[k]]);
        riccati_csv->row(row);
      }
    }
    if (!response_csv.empty()) {
      std::vector<std::string> header{"t"};
      for (const auto& s : sys.info().state_names) header.push_back(s);
      for (const auto& u : sys.info().input_names) header.push_back(u);
      run_csv = std::make_unique<ordex::CsvWriter>(response_csv, header);
      const ordex::ClosedLoopRun& run = *report.run;
      for (std::size_t k = 0; k < run.times.size(); ++k) {
        std::vector<double> row{run.times[k]};
        for (Eigen::Index i = 0; i < n; ++i) row.push_back(run.states(static_cast<Eigen::Index>(k), i));
        for (Eigen::Index i = 0; i < m; ++i) row.push_back(run.inputs(static_cast<Eigen::Index>(k), i));
        run_csv->row(row);
      }
    }
    ordex::Json report_json = report.to_json();
    report_json["caution"] = ordex::kHardwareCaution;
    std::unique_ptr<ordex::OutputFile> json_out;
    if (!common.json.empty() && common.json != "-") {
      json_out = std::make_unique<ordex::OutputFile>(common.json);
      json_out->stream() << report_json.dump(2) << "\n";
    }
    if (gains_csv) gains_csv->commit();
    if (riccati_csv) riccati_csv->commit();
    if (run_csv) run_csv->commit();
    if (json_out) json_out->commit();
    if (common.json == "-") ordex::write_json_file(common.json, report_json);
    if (ordex::report_to_stdout(common)) {
      report.print(std::cout);
      std::cout << ordex::kHardwareCaution << "\n";
    }
    return 0;
  });
}
