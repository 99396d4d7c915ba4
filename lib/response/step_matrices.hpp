#pragma once
// The exact discrete step of x' = A(t) x + B(t) u over one interval [a, b] with the input held
// (zero-order) or linear between u(a) and u(b):
//   x(b) = phi x(a) + gamma0 u(a) + gamma1 u(b)        (zoh: gamma1 is absent, u = u(a))
// obtained as one transition matrix of an input-augmented block generator, so the engine's
// accuracy carries over to the forced part.
//
//   zoh:    G = [[A, B], [0, 0]]                 (n+m square), Phi_G = [[phi, gamma0], [0, I]]
//   linear: G = [[A, B, 0], [0, 0, I], [0, 0, 0]] (n+2m square): states [x; u; v] with u' = v,
//           v' = 0, so u(s) = u(a) + (s - a) v. The top row of Phi_G is [phi, G1, G2] with
//           G1 = int Phi(b,s) B(s) ds and G2 = int Phi(b,s) B(s) (s - a) ds; putting
//           v = (u(b) - u(a)) / h gives gamma1 = G2 / h and gamma0 = G1 - gamma1.
// The generator does not depend on the interval, so one Propagator serves a whole grid.
#include <Eigen/Dense>
#include <functional>
#include <memory>
#include <vector>

#include "propagation/generator.hpp"
#include "propagation/options.hpp"
#include "propagation/propagator.hpp"
#include "response/input_history.hpp"

namespace ordex {

/// The step over [t_start, t_end].
struct StepMatrices {
  double t_start = 0, t_end = 0;
  Eigen::MatrixXd phi;     ///< n x n: Phi(t_end, t_start)
  Eigen::MatrixXd gamma0;  ///< n x m: multiplies u(t_start) (zoh: the held input)
  Eigen::MatrixXd gamma1;  ///< n x m: multiplies u(t_end) (linear hold only; empty for zoh)
};

/// The block generator above for SYS (which must outlive it). Breakpoints are the model's.
Generator held_input_generator(const System& sys, Hold hold);

/// Splits the transition matrix S of held_input_generator over [a, b] into the step matrices.
StepMatrices step_from_transition(const Eigen::MatrixXd& S, int n, int m, Hold hold, double a, double b);

/// True when the model is known not to depend on t (System::time_invariant: every entry a
/// constant) and declares no breakpoints in [t0, t1]: then intervals of equal length share one
/// step. Certain, not sampled: a model whose entries are expressions of t is never reused.
bool known_time_invariant(const System& sys, double t0, double t1);

/// Computes step matrices on grids. Each grid gets a fresh Propagator, so a grid's steps do not
/// depend on which grids came before (a batch gives exactly the results of single runs).
class StepMatrixBuilder {
 public:
  /// REUSE: when looks_time_invariant holds on a grid, intervals of the same length (up to
  /// rounding of the times) share one computed step instead of integrating each.
  /// THREADS: intervals are independent work; with more than one thread (and a model whose
  /// clones may run concurrently) batches of consecutive intervals are integrated on that many
  /// threads, each with its own model clone and engine, and still handed to VISIT in order. The
  /// steps then depend on the thread count within the engine's tolerance (each engine carries its
  /// own step size from interval to interval), never on the timing.
  StepMatrixBuilder(const System& sys, Hold hold, PropagationOptions options, bool reuse = true, int threads = 1);

  /// Hands the step of each interval of KNOTS (strictly increasing) to VISIT, in order.
  void for_each_step(const std::vector<double>& knots,
                     const std::function<void(std::size_t k, const StepMatrices& step)>& visit);
  /// All steps of KNOTS.
  std::vector<StepMatrices> steps(const std::vector<double>& knots);

  /// Engine counts summed over all grids so far (error estimate: the largest).
  const PropagationStats& stats() const { return stats_; }
  /// The engine method in use (Auto resolved).
  Method method() const { return stats_.method; }
  /// Whether the last grid was treated as time-invariant (steps reused).
  bool time_invariant() const { return time_invariant_; }
  /// Steps integrated by the engine, and steps taken from an equal-length interval, so far.
  long computed_steps() const { return computed_; }
  long reused_steps() const { return reused_; }

 private:
  void add_stats(const PropagationStats& s);
  /// The time-varying path on several threads.
  void parallel_steps(const Generator& generator, const std::vector<double>& knots,
                      const std::function<void(std::size_t k, const StepMatrices& step)>& visit);

  const System& sys_;
  Hold hold_;
  bool reuse_;
  int threads_;
  Generator generator_;
  PropagationOptions options_;
  PropagationStats stats_;
  bool time_invariant_ = false;
  long computed_ = 0, reused_ = 0;
};

}  // namespace ordex
