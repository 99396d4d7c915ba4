#include "riccati/periodic_subspace.hpp"

#include <cmath>
#include <complex>

namespace ordex {

namespace {

using cd = std::complex<double>;

bool inside_circle(cd mu, double margin) { return std::abs(mu) < 1.0 - margin; }

// Swaps the diagonal entries k and k+1 of the upper triangular T: with a = T(k,k), b = T(k+1,k+1),
// c = T(k,k+1), the vector x = [c; b - a] is the eigenvector of the 2 x 2 block for b, and the
// unitary G = [x, x_perp] / |x| brings b to position k while keeping T triangular.
void swap_adjacent(Eigen::MatrixXcd& T, Eigen::MatrixXcd& U, Eigen::Index k) {
  const cd a = T(k, k), b = T(k + 1, k + 1), c = T(k, k + 1);
  cd x1 = c, x2 = b - a;
  const double norm = std::hypot(std::abs(x1), std::abs(x2));
  if (norm == 0) return;  // equal eigenvalues with a zero coupling: already in either order
  x1 /= norm;
  x2 /= norm;
  Eigen::Matrix2cd G;
  G << x1, -std::conj(x2), x2, std::conj(x1);
  const Eigen::Index n = T.rows();
  T.middleRows(k, 2).rightCols(n - k) = G.adjoint() * T.middleRows(k, 2).rightCols(n - k);
  T.middleCols(k, 2).topRows(k + 2) = T.middleCols(k, 2).topRows(k + 2) * G;
  U.middleCols(k, 2) = U.middleCols(k, 2) * G;
  T(k + 1, k) = 0.0;  // exactly, by construction (round-off sized before)
}

}  // namespace

int reorder_schur(Eigen::MatrixXcd& T, Eigen::MatrixXcd& U, double unit_margin) {
  const Eigen::Index n = T.rows();
  int placed = 0;
  // Each stable entry, in the order met, bubbles up to just after the ones already placed.
  for (Eigen::Index j = 0; j < n; ++j) {
    if (!inside_circle(T(j, j), unit_margin)) continue;
    for (Eigen::Index k = j; k > placed; --k) swap_adjacent(T, U, k - 1);
    ++placed;
  }
  return placed;
}

StableSubspace stable_subspace(const Eigen::MatrixXd& M, double unit_margin) {
  const Eigen::Index two_n = M.rows(), n = two_n / 2;
  Eigen::ComplexSchur<Eigen::MatrixXcd> schur(M.cast<cd>());
  Eigen::MatrixXcd T = schur.matrixT(), U = schur.matrixU();
  StableSubspace s;
  reorder_schur(T, U, unit_margin);
  s.eigenvalues = T.diagonal();
  for (Eigen::Index i = 0; i < two_n; ++i) {
    const double r = std::abs(s.eigenvalues(i));
    if (r < 1.0 - unit_margin)
      ++s.inside;
    else if (r > 1.0 + unit_margin)
      ++s.outside;
    else
      ++s.on_circle;
  }
  if (s.inside != n) return s;
  s.basis = U.leftCols(n);
  const Eigen::MatrixXcd X1 = s.basis.topRows(n), X2 = s.basis.bottomRows(n);
  Eigen::PartialPivLU<Eigen::MatrixXcd> lu(X1);
  s.x1_rcond = lu.rcond();
  if (!(s.x1_rcond > 1e-14)) return s;
  // P = X2 X1^-1: X1' P' = X2' (solved with the transpose, as the LU is of X1 itself we solve
  // P X1 = X2 through X1^T).
  const Eigen::MatrixXcd Pc = X1.transpose().partialPivLu().solve(X2.transpose()).transpose();
  const double scale = std::max(Pc.real().cwiseAbs().maxCoeff(), 1e-300);
  s.imaginary_part = Pc.imag().cwiseAbs().maxCoeff() / scale;
  const Eigen::MatrixXd P = Pc.real();
  s.asymmetry = (P - P.transpose()).cwiseAbs().maxCoeff() / scale;
  s.P = 0.5 * (P + P.transpose());
  return s;
}

}  // namespace ordex
