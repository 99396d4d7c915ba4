#pragma once
// Which CVODE scheme suits a symmetric matrix equation (symmetric_matrix_ode.hpp), chosen by a
// cheap probe of its Jacobian. The Jacobian of X -> F X + X F' - X R X is V -> Fc V + V Fc'
// with Fc = F - X R, whose eigenvalues are the sums lambda_i + lambda_j of Fc's: so the
// eigenvalues of Fc (n x n, a few of them) tell how the equation's solution moves.
//
// The rule (measured in docs/performance.md, "The Riccati family on the flexible stack"):
//   RungeKutta  when the solution oscillates over many periods (the largest |Im lambda| times
//          the window is at least kExplicitMinRadians) and no mode is stiff (no |Re lambda| above
//          kExplicitMaxDecayRatio times that frequency): a lightly damped structure. There BDF
//          (order <= 5) and Adams are held to a fraction of a radian per step by their
//          stability regions along the imaginary axis (tens of thousands of steps on the
//          flexible stack); the explicit 7(8) pair (explicit_rk.hpp) takes a few radians.
//   Bdf    otherwise: stiff plants (heat conduction, strongly damped modes), slowly varying
//          and scalar problems, where BDF's long steps and the exact Lyapunov preconditioner win.
#include <Eigen/Dense>
#include <string>
#include <vector>

#include "propagation/ode_integrator.hpp"

namespace ordex {

/// At least this many radians of the fastest oscillation over the window for RungeKutta.
constexpr double kExplicitMinRadians = 200.0;
/// RungeKutta only while every |Re lambda| is at most this many times the largest |Im lambda|.
constexpr double kExplicitMaxDecayRatio = 4.0;

/// What the probe saw: the largest |Re lambda| and |Im lambda| over the sampled matrices.
struct SchemeProbe {
  double decay = 0, frequency = 0;
  OdeScheme scheme = OdeScheme::Bdf;
};

/// The scheme for an equation whose closed-loop matrices Fc at a few times are FC_SAMPLES, over
/// a window of length WINDOW (> 0). A sample whose eigenvalues do not converge or are not
/// finite makes the choice Bdf (the robust one).
/// "cvode-adams", "cvode-bdf" or "rkf78": the engine name reports give each scheme.
std::string scheme_engine_name(OdeScheme scheme);

SchemeProbe probe_scheme(const std::vector<Eigen::MatrixXd>& fc_samples, double window);

}  // namespace ordex
