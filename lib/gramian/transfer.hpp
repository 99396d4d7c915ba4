#pragma once
// Minimum-energy transfer from x0 at t0 to xf at t1 (METHODS.md):
//   d = xf - Phi(t1, t0) x0,  lambda = W_r^-1 d,  u(t) = B(t)' Phi(t1, t)' lambda,
//   energy = int |u|^2 dt = d' W_r^-1 d.
// W_r and the step transition matrices come from one block-generator sweep over the sample grid;
// Phi(t1, t_k) is built backward as a product of step matrices (no inverse).
//
// The result is then checked by simulation, independently of the formula: CVODE (Adams)
// integrates the plant x' = A x + B u under the designed input law, u(t) = B(t)' p(t) with the
// costate p' = -A' p started at p(t0) = Phi(t1, t0)' lambda, together with the running energy.
// A second replay feeds the sampled input history, linearly interpolated, to x' = A x + B u,
// which is what ordex-respond (default --hold linear) does with the --input-out file.
#include <Eigen/Dense>
#include <vector>

#include "gramian/gramian_sweep.hpp"
#include "gramian/spectrum.hpp"

namespace ordex {

struct TransferOptions {
  /// Start state x(t0); n entries (required).
  Eigen::VectorXd x0;
  /// Target state x(t1); n entries (required).
  Eigen::VectorXd xf;
  /// Relative rank tolerance of W_r (spectrum.hpp); default 1e-10. A W_r of lower rank cannot
  /// be inverted and the design fails as a numerical error naming the weakest direction.
  double rank_tol = kDefaultRankTol;
  /// State scaling of the rank verdict on W_r (spectrum.hpp); default balanced.
  StateScaling scaling;
  /// A W_r whose scaled condition number exceeds this is inverted with a warning (the energy
  /// and the input inherit errors of W_r magnified by about that much); default 1e8.
  double warn_condition = 1e8;
  /// Relative tolerance of the CVODE replays; default 1e-10 (absolute 1e-12 on scaled unknowns).
  double replay_rtol = 1e-10;
  /// Throws InputError naming --x0 / --xf / the option when sizes or values are wrong.
  void validate(int n) const;
};

struct TransferReport {
  std::vector<double> times;        ///< the sample grid t0 .. t1
  Eigen::MatrixXd inputs;           ///< samples x m: u(t_k), inputs in model order
  double energy = 0;                ///< d' W_r^-1 d (the formula)
  double energy_replayed = 0;       ///< int |u|^2 dt accumulated by the replay
  double peak_input = 0;            ///< largest |u_i(t_k)| over inputs and samples
  Eigen::VectorXd x_final;          ///< x(t1) of the replay under the designed input law
  double final_error = 0;           ///< |x_final - xf| (2-norm)
  double final_error_sampled = 0;   ///< |x(t1) - xf| with the sampled input linearly interpolated
  Eigen::VectorXd costate;          ///< lambda = W_r^-1 d
  Eigen::VectorXd free_final;       ///< Phi(t1, t0) x0 (where x0 drifts without input)
  GramianSpectrum reachability;     ///< the spectrum and rank verdict of W_r(t0, t1)
  /// What the report must say about the inversion (an ill-conditioned W_r), one line each.
  std::vector<std::string> warnings;
  long replay_steps = 0;            ///< CVODE steps of both replays
};

/// Designs and replays the transfer on SWEEP (the controllability pair of SYS swept over the
/// sample grid, at least two times). W_r is used in square-root form, W_r = L L': v = L^+ d (least
/// squares on L), lambda = (L')^+ v, energy = |v|^2; no W_r^-1 is formed. Throws InputError
/// (sizes) or NumericalError (W_r rank deficient or its rank undetermined at the tolerance,
/// integration failure).
TransferReport design_transfer(const System& sys, const GramianSweep& sweep, const TransferOptions& options);

}  // namespace ordex
