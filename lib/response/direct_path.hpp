#pragma once
// The direct path of the forced response, a cross-check of the exact one: CVODE on
// x' = A(t) x + B(t) u(t) with u interpolated from the history under the same hold.
#include <Eigen/Dense>
#include <vector>

#include "propagation/ode_integrator.hpp"
#include "response/input_history.hpp"

namespace ordex {

/// x at every time of KNOTS (strictly increasing, inside H's span), x(knots[0]) = X0; row k
/// is x(knots[k]). The integration restarts at each knot (the input's slope, or with zoh its
/// value, jumps at the samples), and on each interval uses the input of the history's sample
/// interval that contains it, so a jump is never smeared. STATS accumulates CVODE's counts.
Eigen::MatrixXd direct_states(const System& sys, const InputHistory& h, Hold hold,
                              const std::vector<double>& knots, const Eigen::VectorXd& x0,
                              const OdeOptions& options, OdeStats& stats);

}  // namespace ordex
