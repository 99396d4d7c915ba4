#pragma once
// The direct path of the forced response, a cross-check of the exact one: the engine's state
// simulator (propagation/state_simulator.hpp) on x' = A(t) x + B(t) u(t) with u interpolated
// from the history under the same hold. As a cross-check it must be at least as accurate as the
// exact path: its global error is estimated by tolerance reduction (runs with tolerances ten
// times tighter each until two agree to the requested tolerance) and reported, so a run that
// could not reach the tolerance says so.
#include <Eigen/Dense>
#include <vector>

#include "propagation/ode_integrator.hpp"
#include "response/input_history.hpp"

namespace ordex {

/// How accurate the direct path's states are believed to be.
struct DirectAccuracy {
  double target_rtol = 0;      ///< wanted: |error| <= target_rtol |x(t)| + target_atol
  double target_atol = 0;
  double error_estimate = 0;   ///< largest estimated |error| of a state entry over the run(s)
  double error_ratio = 0;      ///< largest estimated error / allowed error (<= 1 when met)
  double final_rtol = 0;       ///< the integrator tolerance of the states returned
  int runs = 0;                ///< simulations made (over every history)
  bool target_met = true;      ///< false: even the tightest tolerance (1e-14) did not reach it
  /// Merges the accuracy of another history's run.
  void merge(const DirectAccuracy& other);
};

/// x at every time of KNOTS (increasing, inside H's span), x(knots[0]) = X0; row k is
/// x(knots[k]). The integration restarts at H's samples (where the input's slope, or with zoh
/// its value, jumps) and at the model's breakpoints. OPTIONS give the first run's tolerances,
/// which are also the accuracy targeted. STATS accumulates CVODE's counts; ACCURACY (optional)
/// receives the global error estimate, merged with what it holds.
Eigen::MatrixXd direct_states(const System& sys, const InputHistory& h, Hold hold,
                              const std::vector<double>& knots, const Eigen::VectorXd& x0,
                              const OdeOptions& options, OdeStats& stats, DirectAccuracy* accuracy = nullptr);

}  // namespace ordex
