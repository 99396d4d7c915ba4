#pragma once
// The regulator in use: u = -K(t) x with K(t) = R^-1 (B'P(t) + N') computed at any t from the
// solver's dense P (Hermite between nodes) and the plant and weights at that t - what a
// controller running the schedule would apply, not the rounded CSV.
#include <Eigen/Dense>
#include <vector>

#include "model/system.hpp"
#include "propagation/ode_integrator.hpp"
#include "propagation/options.hpp"
#include "riccati/lqr_coefficients.hpp"
#include "riccati/riccati_solver.hpp"
#include "riccati/weights.hpp"

namespace ordex {

/// K(t) from a RiccatiSolution. Not thread-safe (holds workspace).
class GainEvaluator {
 public:
  /// SYS, W and SOL must outlive the evaluator.
  GainEvaluator(const System& sys, const Weights& w, const RiccatiSolution& sol);
  /// K(t) into K (m x n); leaves coefficients() evaluated at t.
  void K_at(double t, Eigen::MatrixXd& K);
  /// Acl(t) = A(t) - B(t) K(t) into OUT (n x n).
  void closed_loop_matrix(double t, MatrixRef out);
  LqrCoefficients& coefficients() { return coeff_; }

 private:
  const RiccatiSolution& sol_;
  LqrCoefficients coeff_;
  Eigen::MatrixXd P_, K_;
};

struct ClosedLoopOptions {
  /// Relative tolerance of the closed-loop simulation (state and running cost, CVODE Adams);
  /// default 1e-10. Must lie in [1e-14, 1e-1].
  double rtol = 1e-10;
  /// Absolute tolerance of the simulation; default 1e-12. Must be > 0.
  double atol = 1e-12;
  /// Most integrator steps over the whole run before it fails as a NumericalError (a bounded
  /// cost on stiff plants); default 10^7. Must be >= 1.
  long max_steps = 10000000;
  /// Throws InputError naming the option when out of range.
  void validate() const;
};

/// One closed-loop run from x0 over the solution's horizon.
struct ClosedLoopRun {
  Eigen::VectorXd x0, x_final;
  double cost_predicted = 0;  ///< x0' P(t0) x0
  double cost_simulated = 0;  ///< x(t1)' Qf x(t1) + int (x'Qx + 2x'Nu + u'Ru) dt along the run
  std::vector<double> times;  ///< the output times
  Eigen::MatrixXd states;     ///< x at each output time (rows)
  Eigen::MatrixXd inputs;     ///< u = -K x at each output time (rows)
  OdeStats stats;             ///< of the simulation
};

/// Simulates x' = A x + B u, u = -K(t) x from X0 at t0, together with the running cost as one
/// more unknown (quadrature by the same integrator), reporting x and u at OUTPUT_TIMES
/// (ascending, from t0 to t1).
ClosedLoopRun simulate_closed_loop(const System& sys, const Weights& w, const RiccatiSolution& sol,
                                   const Eigen::VectorXd& x0, const std::vector<double>& output_times,
                                   const ClosedLoopOptions& options = {});

/// The closed-loop transition matrix Phi_cl(TB, TA) of Acl(t) = A - B K(t), by the engine.
/// STATS (optional) receives the engine's counts.
Eigen::MatrixXd closed_loop_transition(const System& sys, const Weights& w, const RiccatiSolution& sol, double ta,
                                       double tb, const PropagationOptions& options,
                                       PropagationStats* stats = nullptr);

}  // namespace ordex
