#pragma once
// A symmetric n x n matrix as its n(n+1)/2 independent entries (the upper triangle, column by
// column): the unknowns of the Riccati and Lyapunov differential equations, symmetric by
// construction.
#include <Eigen/Dense>

namespace ordex {

inline int packed_size(int n) { return n * (n + 1) / 2; }

/// Upper triangle of W, column by column, into OUT (packed_size(n) values).
inline void pack_symmetric(const Eigen::MatrixXd& w, double* out) {
  const Eigen::Index n = w.rows();
  for (Eigen::Index j = 0; j < n; ++j)
    for (Eigen::Index i = 0; i <= j; ++i) *out++ = w(i, j);
}

/// The inverse of pack_symmetric; W must already be n x n.
inline void unpack_symmetric(const double* in, Eigen::MatrixXd& w) {
  const Eigen::Index n = w.rows();
  for (Eigen::Index j = 0; j < n; ++j)
    for (Eigen::Index i = 0; i <= j; ++i) {
      w(i, j) = *in;
      w(j, i) = *in++;
    }
}

}  // namespace ordex
