#pragma once
// The discrete-time model x_{k+1} = Phi_k x_k + Gamma_k u_k of x' = A(t) x + B(t) u on a grid
// of sample times, exact for an input held between samples:
//   zoh:    x_{k+1} = Phi_k x_k + Gamma_k u_k
//   linear: x_{k+1} = Phi_k x_k + Gamma0_k u_k + Gamma1_k u_{k+1}
// These are the step matrices of step_matrices.hpp, the same ones ordex-respond applies, so
// the discrete model reproduces the forced response on the same grid.
#include <Eigen/Dense>
#include <functional>
#include <memory>
#include <string>
#include <vector>

#include "io/json.hpp"
#include "model/model_report.hpp"
#include "propagation/options.hpp"
#include "response/input_history.hpp"
#include "response/step_matrices.hpp"

namespace ordex {

struct DiscretizeOptions {
  /// Input between samples; default Hold::Zoh (the usual model of a digital controller's
  /// output). Use Hold::Linear to match ordex-respond's default.
  Hold hold = Hold::Zoh;
  /// Engine options (method, tolerances); default PropagationOptions{}.
  PropagationOptions propagation;
  /// Reuse the step of an equal-length interval when the model looks time-invariant
  /// (known_time_invariant); default true.
  bool reuse_time_invariant = true;
  /// Threads for the intervals of a time-varying model (each its own model copy and engine;
  /// StepMatrixBuilder); default 2. Must be in [1, 64].
  int threads = 2;
  /// For discretize(sys, t0, t1, ...): the grid t0, t0 + step, t0 + 2 step, ... and t1 (step_grid);
  /// default 0 means `samples` equally spaced times instead. 0 or a positive number.
  double step = 0;
  /// For discretize(sys, t0, t1, ...) without a step: this many equally spaced times in the
  /// window, both ends included; default 101. Must lie in [2, 10^7].
  int samples = 101;
  /// Called with each interval's step as soon as it is computed (k = 0, 1, ...), for writing it
  /// to a file as it comes; default none.
  std::function<void(std::size_t k, const StepMatrices& step)> on_step;
  /// Whether the report keeps every step (DiscreteModel::steps, listed by to_json); default true.
  /// False (with on_step) keeps memory flat however many intervals the grid has: the report
  /// then has the grid, the counts and the growth, and no steps.
  bool keep_steps = true;
  /// Throws InputError naming the field ("DiscretizeOptions::samples = 1 is outside ...").
  void validate() const;
};

struct DiscreteModel {
  Hold hold = Hold::Zoh;
  int states = 0, inputs = 0;
  std::vector<double> times;        ///< the grid t_0 < t_1 < ... < t_K
  std::vector<StepMatrices> steps;  ///< K steps; steps[k] maps t_k to t_{k+1}
};

struct DiscretizeReport {
  /// The common header: the model (title, source, parameters in effect), the grid's first and
  /// last time, and the engine method used.
  ReportHeader header;
  std::vector<std::string> states, inputs;  ///< the model's names
  DiscreteModel model;
  Method method = Method::Auto;  ///< engine method used
  PropagationStats propagation;  ///< engine counts and error estimate
  long computed_steps = 0;       ///< intervals integrated by the engine
  long reused_steps = 0;         ///< intervals reused from an equal-length one (time-invariant)
  bool time_invariant = false;   ///< whether the grid was treated as time-invariant
  double seconds = 0;            ///< wall time
  /// Largest singular value of the product Phi_{K-1} ... Phi_0 = Phi(t_K, t_0) (the growth over
  /// the grid), and of the largest single step Phi_k; computed as the steps come, kept or not.
  double growth = 0, largest_step = 0;

  /// The summary (CONTRACT.md): the header, then hold, names, intervals, times, phi (a list over
  /// the intervals of n x n), gamma (zoh) or gamma0 and gamma1 (linear), n x m each, and stats.
  Json to_json() const;
  /// A few lines for standard output.
  std::string brief() const;
};

/// The discrete model of SYS on TIMES (at least 2, strictly increasing, finite).
DiscretizeReport discretize(const System& sys, const std::vector<double>& times, const DiscretizeOptions& options);
/// The discrete model of SYS over [T0, T1] on the grid of OPTIONS.step, or OPTIONS.samples
/// equally spaced times.
DiscretizeReport discretize(const System& sys, double t0, double t1, const DiscretizeOptions& options);

/// t0, t0 + h, t0 + 2h, ... and t1 (the last interval is shorter when H does not divide the
/// window; one shorter than 1e-9 h is merged into its neighbour). Requires t0 < t1, h > 0 and
/// at most 10^7 intervals; throws InputError naming DiscretizeOptions::step.
std::vector<double> step_grid(double t0, double t1, double h);

/// Reads one time a line from PATH (blank lines and '#' comments skipped; an optional first
/// line "t" is a header). At least 2 times, strictly increasing, finite; every mistake throws
/// InputError "PATH:LINE: what".
std::vector<double> read_time_grid(const std::string& path);

/// States at the grid times of x_{k+1} = Phi_k x_k + Gamma_k u_k (linear: + Gamma1_k u_{k+1})
/// from X0, with U row k = u(t_k). Returns (K+1) x n.
Eigen::MatrixXd simulate_discrete(const DiscreteModel& model, const Eigen::VectorXd& x0, const Eigen::MatrixXd& U);

/// CSV, one row an interval: k,t_start,t_end,phi_1_1..phi_n_n, then gamma_1_1..gamma_n_m
/// (zoh) or gamma0_1_1..gamma0_n_m,gamma1_1_1..gamma1_n_m (linear); row-major, 1-based.
void write_discrete_model_csv(const std::string& path, const DiscreteModel& model);

class CsvWriter;
/// The same CSV written one interval at a time (from DiscretizeOptions::on_step), so that the
/// steps need not be kept; commit() puts the file in place.
class DiscreteModelCsv {
 public:
  DiscreteModelCsv(const std::string& path, int states, int inputs, Hold hold);
  ~DiscreteModelCsv();
  void row(std::size_t k, const StepMatrices& step);
  void commit();

 private:
  Hold hold_;
  std::unique_ptr<CsvWriter> csv_;
  std::vector<double> row_;
};
}  // namespace ordex
