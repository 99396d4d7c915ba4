#include "riccati/lyapunov.hpp"

#include <cmath>

#include "io/errors.hpp"

namespace ordex {

void LyapunovSolver::factor(const Eigen::MatrixXd& F) {
  schur_.compute(F);
  if (schur_.info() != Eigen::Success) throw NumericalError("Lyapunov solver: Schur form did not converge");
  U_ = schur_.matrixU();
  T_ = schur_.matrixT();
  const Eigen::Index n = T_.rows();
  const double scale = std::max(1.0, T_.cwiseAbs().maxCoeff());
  double smallest = INFINITY;
  for (Eigen::Index i = 0; i < n; ++i)
    for (Eigen::Index j = 0; j < n; ++j) smallest = std::min(smallest, std::abs(std::conj(T_(i, i)) + T_(j, j)));
  if (!(smallest > 1e-14 * scale))
    throw NumericalError("Lyapunov solver: F' X + X F = C is singular (eigenvalues of F sum to zero)");
}

void LyapunovSolver::solve(const Eigen::MatrixXd& C, Eigen::MatrixXd& X) {
  const Eigen::Index n = T_.rows();
  work_.noalias() = U_.adjoint() * C * U_;  // the right-hand side in the Schur basis
  Y_.resize(n, n);
  rhs_.resize(n);
  for (Eigen::Index j = 0; j < n; ++j) {
    // Column j: (T* + T_jj I) y_j = c_j - sum_{k<j} y_k T_kj, T* lower triangular.
    rhs_ = work_.col(j);
    if (j > 0) rhs_.noalias() -= Y_.leftCols(j) * T_.col(j).head(j);
    for (Eigen::Index i = 0; i < n; ++i) {
      std::complex<double> s = rhs_(i);
      // sum_{k<i} conj(T_ki) y_k; Eigen's complex dot conjugates its first argument.
      if (i > 0) s -= T_.col(i).head(i).dot(Y_.col(j).head(i));
      Y_(i, j) = s / (std::conj(T_(i, i)) + T_(j, j));
    }
  }
  X = (U_ * Y_ * U_.adjoint()).real();
}

}  // namespace ordex
