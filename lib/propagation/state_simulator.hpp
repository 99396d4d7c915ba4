#pragma once
// The engine's state simulator: x' = A(t) x + B(t) u with
//   u = u_ff(t) - K(t) x   (an interpolated sample history or a function, optional feedback), or
//   u = f(t, x)            (a general input law),
// optionally with a running cost L(t, x, u) integrated alongside (one more unknown), by CVODE,
// with dense output at the requested times. The integration restarts at the plant's
// breakpoints and at the input samples (where a held input jumps or an interpolated one kinks),
// and every callback asked at such a time sees the side being integrated.
//
// Users: the direct path of the forced response, the regulator's closed loop and the transfer's
// replays. A failing right-hand side (a non-finite derivative, a callback that throws) stops the
// run at once with the state and t named.
//
// Threads: simulate_states may run concurrently on different threads as long as the callbacks
// it is given do not share mutable state (build them over a clone() of the model per thread).
#include <Eigen/Dense>
#include <functional>
#include <string>
#include <vector>

#include "model/system.hpp"
#include "propagation/ode_integrator.hpp"

namespace ordex {

/// x' = A(t) x + B(t) u.
struct LinearPlant {
  int states = 0;  ///< n
  int inputs = 0;  ///< m (0: no B)
  std::function<void(double t, MatrixRef A)> A;  ///< n x n; required
  std::function<void(double t, MatrixRef B)> B;  ///< n x m; required when inputs > 0
  std::vector<double> breakpoints;                ///< where A or B may jump
  std::vector<std::string> state_names;           ///< optional: names states in messages
  std::string label = "x' = A x + B u";           ///< names the simulation in messages
};

/// The plant of SYS (which must outlive the result) over [t0, t1]: its A, B, state names and the
/// breakpoints and switching times inside the window (System::breakpoints_between).
/// Not for concurrent use (a System is not thread-safe).
LinearPlant linear_plant(const System& sys, double t0, double t1);

/// How a sampled input is continued between samples t_k < t_{k+1}.
enum class SampleInterpolation {
  ZeroOrderHold,  ///< u(t) = u_k on [t_k, t_{k+1})
  Linear          ///< straight line from u_k to u_{k+1}
};

/// Samples of the input: row k of VALUES is u(times[k]). Outside the samples the first or last
/// value is held.
struct SampledInput {
  std::vector<double> times;  ///< strictly increasing; empty means no samples
  Eigen::MatrixXd values;     ///< times x inputs
  SampleInterpolation interpolation = SampleInterpolation::Linear;
  /// U(T) (inputs values).
  void value(double t, Eigen::Ref<Eigen::VectorXd> u) const;
  /// Throws InputError naming the field when sizes or times are wrong.
  void validate(int inputs) const;
};

/// What drives the plant. With GENERAL set, u = general(t, x) and the other fields are
/// ignored; otherwise u = u_ff(t) - K(t) x with u_ff from SAMPLES (when it has samples) or
/// FEEDFORWARD (when set), else zero, and the feedback term only when GAIN is set.
struct InputLaw {
  SampledInput samples;
  std::function<void(double t, Eigen::Ref<Eigen::VectorXd> u)> feedforward;
  std::function<void(double t, MatrixRef K)> gain;  ///< K(t), inputs x states
  std::function<void(double t, const Eigen::VectorXd& x, Eigen::Ref<Eigen::VectorXd> u)> general;
};

struct StateSimulation {
  LinearPlant plant;
  InputLaw input;
  /// Optional running cost L(t, x, u); its integral from the start is reported at each time.
  std::function<double(double t, const Eigen::VectorXd& x, const Eigen::VectorXd& u)> running_cost;
  /// Throws InputError naming the field when the description is incomplete.
  void validate() const;
};

/// Global accuracy control of simulate_states: the run is repeated with the tolerances ten times
/// tighter until two successive runs agree to TARGET_RTOL (relative to the largest state entry
/// at each output time) plus TARGET_ATOL, and the more accurate run is returned with the
/// difference as its error estimate (tolerance reduction: for a linear plant a run's global
/// error shrinks with its tolerances, whatever the growth of the solution).
struct GlobalAccuracy {
  bool enabled = false;       ///< default off: one run at the given tolerances
  double target_rtol = 1e-8;  ///< relative accuracy wanted of the returned states
  double target_atol = 1e-10; ///< absolute accuracy wanted
};

struct SimulationResult {
  std::vector<double> times;  ///< the output times
  Eigen::MatrixXd states;     ///< times x n
  Eigen::MatrixXd inputs;     ///< times x m: u at each output time
  Eigen::VectorXd cost;       ///< integral of the running cost from the start (empty without one)
  OdeStats stats;             ///< of every run made
  int runs = 1;               ///< runs made (more than one under GlobalAccuracy)
  double final_rtol = 0;      ///< the tolerance of the returned run
  /// Under GlobalAccuracy: the largest |x_run - x_previous_run| over times and states, and
  /// whether it met the target (otherwise the tightest tolerance, 1e-14, was reached first).
  double error_estimate = 0;
  double error_ratio = 0;     ///< largest difference / (target_rtol |x(t)| + target_atol)
  bool target_met = true;
};

/// Simulates from X0 at T0 and reports at OUTPUT_TIMES (monotone, all on one side of T0, T0
/// itself allowed). Throws InputError for bad sizes, NumericalError on failure.
SimulationResult simulate_states(const StateSimulation& sim, double t0, const Eigen::VectorXd& x0,
                                 const std::vector<double>& output_times, const OdeOptions& options,
                                 const GlobalAccuracy& accuracy = {});

}  // namespace ordex
