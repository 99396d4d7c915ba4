#pragma once
// The periodic steady state of the Riccati equation (docs/periodic.md): for a plant with period
// T, the stabilizing periodic solution P(t) = P(t + T) of
//   -dP/dt = A'P + PA - (PB + N) R^-1 (B'P + N') + Q,
// the limit of the finite-horizon solution as the horizon grows, and the gain K = R^-1 (B'P + N')
// that stabilizes the plant for all time.
//
// 1. The engine propagates the Hamiltonian [[A~, -B R^-1 B'], [-Q~, -A~']] over one period from
//    t0: its monodromy M. The trajectories [x; P x] of the optimal closed loop span the
//    n-dimensional invariant subspace of M whose multipliers (the closed-loop ones) lie inside the
//    unit circle; [X1; X2] a basis of it gives P(t0) = X2 X1^-1 (periodic_subspace.hpp).
// 2. The Riccati equation (the regulator's solver, RiccatiOptions) is integrated backward over one
//    period from P(t0 + T) = P(t0). Its value at t0 must come back to P(t0): the relative gap is
//    the check. When the subspace was ill-determined (a long period makes M very ill-conditioned)
//    the backward pass, which is attracted to the stabilizing solution, is repeated from its own
//    end value until the gap is within tolerance (PeriodicOptions::max_passes).
// No stabilizing solution exists when a mode the inputs cannot move is unstable (X1 singular)
// or when a multiplier of M lies on the unit circle: NumericalError naming the multiplier.
#include <Eigen/Dense>
#include <string>

#include "model/system.hpp"
#include "propagation/floquet.hpp"
#include "propagation/options.hpp"
#include "riccati/riccati_solver.hpp"
#include "riccati/weights.hpp"

namespace ordex {

struct PeriodicOptions {
  /// A multiplier of the Hamiltonian monodromy with | |mu| - 1 | below this counts as on the unit
  /// circle (no stabilizing solution); default 1e-7. Must lie in (0, 0.1].
  double unit_margin = 1e-7;
  /// Largest relative gap max|P(t0) after one backward period - P(t0)| / max|P(t0)| accepted;
  /// default 1e-6. Must lie in [1e-13, 1e-1].
  double periodicity_tolerance = 1e-6;
  /// Most backward passes over one period (the first checks the subspace's P(t0); the others
  /// refine an ill-determined one); default 20. Must lie in [1, 10000].
  int max_passes = 20;
  /// Throws InputError naming the field.
  void validate() const;
};

/// Which problem a steady state solves, for messages: the regulator (stabilizable, inputs) or
/// the filter through its dual (detectable, outputs).
enum class PeriodicRole { Regulator, Filter };

/// The periodic solution at t0 and how it was found.
struct PeriodicSteadyState {
  double t0 = 0, period = 0;
  Eigen::MatrixXd P0;                 ///< P(t0) after the passes (symmetric, PSD)
  Eigen::MatrixXd P0_subspace;        ///< P(t0) = X2 X1^-1 from the stable subspace
  Eigen::VectorXcd hamiltonian_multipliers;  ///< eigenvalues of M, the stable ones first
  double x1_rcond = 0;                ///< reciprocal condition number of X1
  double imaginary_part = 0;          ///< |Im P| / |Re P| of the complex-basis P (round-off)
  double asymmetry = 0;               ///< |P - P'| / |P| before symmetrizing
  double smallest_eigenvalue = 0;     ///< of P0_subspace, relative to its largest |eigenvalue|
  double first_gap = 0;               ///< relative periodicity gap of the subspace's P(t0)
  double gap = 0;                     ///< relative periodicity gap of the returned P0
  int passes = 0;                     ///< backward passes over one period
  FloquetReport open_loop;            ///< multipliers of A over [t0, t0 + T]
  PropagationStats monodromy_stats;   ///< engine counts of the Hamiltonian monodromy
  double monodromy_norm = 0;          ///< max |M| (ill-conditioning grows with it)
  /// Empty, or a line saying the subspace was ill-determined and was refined by passes.
  std::string note;
};

/// The Hamiltonian monodromy over [T0, T0 + period] and its stable subspace, then the passes.
/// W's Qf is not used. Throws InputError when SYS has no period or no inputs, or the weights are
/// wrong; NumericalError when no stabilizing solution exists (naming the multiplier) or the
/// periodicity check fails after max_passes.
PeriodicSteadyState periodic_steady_state(const System& sys, const Weights& w, double t0,
                                          const RiccatiOptions& riccati, const PeriodicOptions& options = {},
                                          PeriodicRole role = PeriodicRole::Regulator);

}  // namespace ordex
