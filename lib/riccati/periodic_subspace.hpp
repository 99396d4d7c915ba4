#pragma once
// The stable invariant subspace of a Hamiltonian monodromy matrix and the Riccati solution it
// gives, P = X2 X1^-1 (docs/periodic.md).
//
// Eigen has no ordered real Schur form. We use its complex Schur form M = U T U^H and move the
// eigenvalues inside the unit circle to the leading positions by unitary swaps of adjacent
// diagonal entries (each a 2 x 2 Givens-like rotation, as in the standard reordering of a
// triangular Schur form). The first n columns of U then span the invariant subspace that belongs
// to those eigenvalues. That subspace is real: M is real, so its eigenvalues inside the circle
// come in conjugate pairs and the subspace is closed under conjugation. P = X2 X1^-1 does not
// depend on which basis of the subspace is used (X -> X S leaves X2 X1^-1 unchanged), so the
// complex basis gives the real P up to round-off; its imaginary part is reported as a check.
#include <Eigen/Dense>
#include <string>

namespace ordex {

struct StableSubspace {
  /// The eigenvalues of M, the stable ones first (as ordered in the Schur form).
  Eigen::VectorXcd eigenvalues;
  /// Number of eigenvalues with modulus < 1 - unit_margin, > 1 + unit_margin, and in between.
  int inside = 0, outside = 0, on_circle = 0;
  /// The basis [X1; X2] (2n x n, orthonormal columns) of the stable subspace; valid when
  /// inside == n.
  Eigen::MatrixXcd basis;
  /// Reciprocal condition number (1-norm estimate) of X1; ~0 when X1 is singular.
  double x1_rcond = 0;
  /// Largest |Im P| relative to the largest |Re P| (the subspace's realness, round-off sized).
  double imaginary_part = 0;
  /// P = X2 X1^-1, real part, symmetrized; valid when inside == n and X1 is invertible.
  Eigen::MatrixXd P;
  /// |P - P'| / |P| before symmetrizing (max-entry norms).
  double asymmetry = 0;
};

/// The ordered complex Schur form of M (2n x 2n): eigenvalues with |mu| < 1 first. UNIT_MARGIN
/// decides which count as on the unit circle. Computes P when the stable count is n and X1 is
/// invertible (x1_rcond > 0); otherwise leaves P empty: the caller reports why.
StableSubspace stable_subspace(const Eigen::MatrixXd& M, double unit_margin);

/// Reorders a complex Schur form (T upper triangular, M = U T U^H) in place so that the
/// diagonal entries for which STABLE(mu) holds come first, keeping M = U T U^H. Returns their
/// number. Exposed for tests.
int reorder_schur(Eigen::MatrixXcd& T, Eigen::MatrixXcd& U, double unit_margin);

}  // namespace ordex
