#pragma once
// The simulate job: the nonlinear plant flown open loop, or closed with a gain schedule
// u = u_n(t) - K(t) (x - x_n(t)) (optionally saturated), from an initial deviation from the
// nominal, once or as a seeded Monte Carlo batch with dispersed initial states and parameters,
// on several threads. Each run is compared with the linear prediction Phi_cl(t1, t0) dx0 of the
// linearization's closed loop. ordex-simulate and sweeps call simulate() in-process.
#include <Eigen/Dense>
#include <cstdint>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "io/json.hpp"
#include "model/model_report.hpp"
#include "nonlinear/nonlinear_model.hpp"
#include "nonlinear/run_inputs.hpp"
#include "propagation/options.hpp"
#include "propagation/state_simulator.hpp"

namespace ordex {

struct SimulateOptions {
  /// The window; default (empty) the model's (the nominal's span). Must lie inside it.
  std::optional<double> from, to;
  /// Output times per run (equally spaced, ends included): the CSV rows; default 101, >= 2.
  int samples = 101;
  /// Initial deviation from the nominal, n values; empty (default) means zero.
  Eigen::VectorXd dx0;
  /// The gain schedule of the closed loop; null (default) flies open loop (u = u_n).
  std::shared_ptr<const GainSchedule> gains;
  /// A disturbance added to the input after the limits (times x m samples, linear between them,
  /// held outside): u = sat(u_n - K dx) + w(t). Null (default): none.
  std::shared_ptr<const SampledInput> disturbance;
  /// Input limits (saturation), m values each; empty (default) means none. u_min <= u_max.
  Eigen::VectorXd u_min, u_max;
  /// Dispersions of the initial state and parameters; empty (default) means none.
  Dispersions dispersions;
  /// Runs, default 1; with dispersions each run draws its own. At most 10^6.
  int runs = 1;
  /// Seed of the batch; run k draws from a stream of its own derived from (seed, k), so results
  /// do not depend on the number of threads. Default 1.
  std::uint64_t seed = 1;
  /// Threads; 0 (default) uses the machine's cores (at most 2 unless set).
  int threads = 0;
  /// Keep every run's history (times, states, inputs) for CSV output; default false.
  bool keep_histories = false;
  /// Integration tolerances and scheme (adams or bdf; other methods mean adams); the linear
  /// prediction uses the engine with these options.
  PropagationOptions propagation;
  /// Throws InputError naming the field (SimulateOptions::dx0 ...) for N states and M inputs.
  void validate(int n, int m) const;
};

/// One run's results.
struct RunSummary {
  int index = 0;                      ///< 0-based
  bool ok = true;                     ///< false: FAILURE says why (non-finite, step failure)
  std::string failure;
  Eigen::VectorXd dx0;                ///< the initial deviation flown (with dispersion)
  std::vector<std::pair<std::string, double>> parameters;  ///< dispersed parameters only
  Eigen::VectorXd x_final, dx_final;  ///< at the end of the window
  double peak_deviation = 0;          ///< max over time of |x - x_n| (2-norm)
  double peak_deviation_time = 0;     ///< when it happened
  double peak_input = 0;              ///< max over time and inputs of |u|
  double cost = 0;                    ///< integral of |x - x_n|^2 + |u - u_n|^2
  double linear_gap = 0;              ///< |dx_final - Phi_cl(t1, t0) dx0|
  // With keep_histories: the output times, states (times x n) and inputs (times x m).
  std::vector<double> times;
  Eigen::MatrixXd states, inputs;
};

/// Statistics over the runs that completed.
struct RunStatistics {
  int completed = 0, failed = 0;
  Eigen::VectorXd dx_final_mean, dx_final_std;  ///< per state (sample standard deviation)
  double peak_deviation_mean = 0, peak_deviation_max = 0;
  double peak_input_max = 0, cost_mean = 0;
  double linear_gap_mean = 0, linear_gap_max = 0;
  Json to_json() const;
};

struct SimulateReport {
  ReportHeader header;
  bool closed_loop = false;
  std::vector<std::string> state_names, input_names;
  Eigen::VectorXd nominal_final;         ///< x_n(t1)
  Eigen::MatrixXd linear_transition;     ///< Phi_cl(t1, t0) of the linearization
  std::vector<RunSummary> runs;
  RunStatistics statistics;
  int threads = 1;
  std::string prediction_method;  ///< the engine's method for Phi_cl (the header's is the runs')
  /// The header, then mode, x_final and dx_final (one run) or runs and statistics.
  Json to_json() const;
  std::string brief() const;
};

/// Reads a disturbance CSV: t and columns named after inputs of INFO (any subset; the others are
/// zero). Throws InputError naming the file and the column.
SampledInput read_disturbance(const std::string& path, const SystemInfo& info);

/// Flies the batch. Throws InputError for bad options; a run that fails is recorded, not thrown.
SimulateReport simulate(const NonlinearModel& model, const SimulateOptions& options);

}  // namespace ordex
