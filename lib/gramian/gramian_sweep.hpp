#pragma once
// One pass of Van Loan's block generator over a time grid: every interval's transition matrix
// and Gramian, and the running products that let any window [t_i, t_j] of the grid be read off
// without integrating again.
//
// For G(t) = [[a, q], [0, -a']] the transition matrix over [s, t] is X = [[X11, X12], [0, X22]]
// with X11 = Phi(t, s), X22 = Phi(s, t)' and X12 = int Phi(t, r) q Phi(s, r)' dr, so
//   W_r(s, t) = X12 X11'   and   W_c(s, t) = X22' X12,
// and no matrix is ever inverted: Phi(s, t) comes from X22. X22 grows where a decays (stiff
// modes); an interval whose Phi(t, s) or Phi(s, t) has an entry above 1e6 is halved and its
// halves composed, so stiff models work on any grid.
#include <Eigen/Dense>
#include <vector>

#include "gramian/gramian.hpp"
#include "gramian/spectrum.hpp"
#include "propagation/generator.hpp"

namespace ordex {

/// The block generator [[a, q], [0, -a']] of PAIR (2n x 2n) for the engine.
Generator block_generator(const WeightedPair& pair);

struct GramianSweep {
  std::vector<double> times;                 ///< the grid t_0 < ... < t_N
  // Per interval k = 0 .. N-1:
  std::vector<Eigen::MatrixXd> step_phi;     ///< Phi(t_{k+1}, t_k)
  std::vector<Eigen::MatrixXd> step_phi_inv; ///< Phi(t_k, t_{k+1}) (from X22, not an inverse)
  std::vector<Eigen::MatrixXd> step_reach;   ///< W_r(t_k, t_{k+1}) = X12 X11', symmetric
  std::vector<Eigen::MatrixXd> step_ctrl;    ///< W_c(t_k, t_{k+1}) = X22' X12, symmetric
  std::vector<GramianFactor> step_reach_factor;  ///< square-root form of step_reach (graded)
  std::vector<GramianFactor> step_ctrl_factor;   ///< square-root form of step_ctrl (graded)
  // Per grid point k = 0 .. N:
  std::vector<Eigen::MatrixXd> phi_from_start;  ///< F_k = Phi(t_k, t_0)
  std::vector<Eigen::MatrixXd> phi_to_start;    ///< Psi_k = Phi(t_0, t_k)
  std::vector<Eigen::MatrixXd> cum_ctrl;        ///< C_k = W_c(t_0, t_k)
  PropagationStats stats;                       ///< summed over the threads
  /// Model entries whose switching times could not be located (steps may straddle a jump there).
  std::vector<std::string> notes;
  /// 0 when every running product is finite; else the last grid index k with finite F_k,
  /// Psi_k and C_k (W_c(t0, t) of a stiff stable model grows without bound).
  std::size_t running_valid_to = 0;

  int n() const { return step_phi.empty() ? 0 : static_cast<int>(step_phi[0].rows()); }
  std::size_t intervals() const { return step_phi.size(); }

  /// W_r(t_i, t_j) in square-root form: L <- [S_k L, F_k] compressed by QR at every step
  /// (F_k the step's factor), so the result is positive semidefinite by construction.
  GramianFactor reachability_factor(std::size_t i, std::size_t j) const;
  /// W_c(t_i, t_j) in square-root form, composed backward: L <- [F_k, S_k^-1 L] compressed.
  GramianFactor controllability_factor(std::size_t i, std::size_t j) const;
  /// L L' of reachability_factor(i, j).
  Eigen::MatrixXd compose_reachability(std::size_t i, std::size_t j) const;
  /// L L' of controllability_factor(i, j).
  Eigen::MatrixXd compose_controllability(std::size_t i, std::size_t j) const;
  /// Phi(t_j, t_i) as the product of the step matrices.
  Eigen::MatrixXd compose_phi(std::size_t i, std::size_t j) const;
};

/// Runs the block generator of the pair of KIND of SYS over TIMES (strictly ascending, at least
/// two). The intervals are split into THREADS contiguous chunks, each propagated on its own
/// thread with its own clone() of SYS and its own engine. Throws InputError / NumericalError.
GramianSweep sweep_gramians(const System& sys, GramianKind kind, const std::vector<double>& times,
                            const PropagationOptions& options, int threads);

}  // namespace ordex
