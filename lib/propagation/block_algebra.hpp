#pragma once
// Products and commutators for the steppers on block upper triangular matrices.
//
// Van Loan's generator of a Gramian, G = [[F, S], [0, -F']] with S symmetric (2k x 2k), lies in
// a Lie algebra: the commutator of two such matrices has the same form, and so has every
// linear combination of them, hence every Magnus Omega built from G. With X = [[X1, X2],
// [0, -X1']] and Y = [[Y1, Y2], [0, -Y1']],
//   [X, Y] = [[C, P + P'], [0, -C']],   C = X1 Y1 - Y1 X1,   P = X1 Y2 - Y1 X2,
// four k x k products instead of the sixteen of two dense 2k x 2k products. Transition
// matrices and stage values (sums of such products and the identity) are block upper
// triangular without the symmetry; their product costs four k x k products instead of eight.
// A split of 0 means "dense": the plain products, so one call site serves every generator.
#include <Eigen/Dense>

namespace ordex {

/// OUT = X Y for X, Y block upper triangular split at K (their lower-left (dim - K) x K
/// blocks are zero and are not read); OUT's lower-left block is set to zero. K = 0: the dense
/// product. OUT must not alias X or Y.
template <class Out, class M1, class M2>
void block_product_into(Out& out, const M1& x, const M2& y, Eigen::Index k) {
  if (k <= 0) {
    out.noalias() = x * y;
    return;
  }
  const Eigen::Index r = x.rows() - k;
  out.topLeftCorner(k, k).noalias() = x.topLeftCorner(k, k) * y.topLeftCorner(k, k);
  out.topRightCorner(k, r).noalias() = x.topLeftCorner(k, k) * y.topRightCorner(k, r);
  out.topRightCorner(k, r).noalias() += x.topRightCorner(k, r) * y.bottomRightCorner(r, r);
  out.bottomRightCorner(r, r).noalias() = x.bottomRightCorner(r, r) * y.bottomRightCorner(r, r);
  out.bottomLeftCorner(r, k).setZero();
}

/// OUT = X Y - Y X for X, Y of Van Loan's form [[X1, X2], [0, -X1']] with X2 symmetric, both
/// split at K = dim / 2 (only the top blocks are read). WORK is k x k scratch. K = 0: the dense
/// commutator. OUT must not alias X, Y or WORK.
template <class Out, class M1, class M2, class Work>
void van_loan_commutator_into(Out& out, const M1& x, const M2& y, Eigen::Index k, Work& work) {
  if (k <= 0) {
    out.noalias() = x * y;
    out.noalias() -= y * x;
    return;
  }
  auto c = out.topLeftCorner(k, k);
  c.noalias() = x.topLeftCorner(k, k) * y.topLeftCorner(k, k);
  c.noalias() -= y.topLeftCorner(k, k) * x.topLeftCorner(k, k);
  work.noalias() = x.topLeftCorner(k, k) * y.topRightCorner(k, k);
  work.noalias() -= y.topLeftCorner(k, k) * x.topRightCorner(k, k);
  out.topRightCorner(k, k) = work + work.transpose();
  out.bottomRightCorner(k, k) = -c.transpose();
  out.bottomLeftCorner(k, k).setZero();
}

/// K when the lower-left (rows - K) x K block of M is exactly zero (0 < K < rows), else 0: the
/// split at which block_product_into may treat M, checked once per leg for the carried X.
template <class M>
Eigen::Index zero_lower_left_split(const M& m, Eigen::Index k) {
  if (k <= 0 || k >= m.rows()) return 0;
  return m.bottomLeftCorner(m.rows() - k, k).isZero(0) ? k : 0;
}

}  // namespace ordex
