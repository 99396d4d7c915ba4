#include "propagation/lyapunov_solver.hpp"

#include <cmath>

#include "io/errors.hpp"

namespace ordex {

void SchurLyapunovSolver::factor(const Eigen::MatrixXd& M) {
  schur_.compute(M);
  if (schur_.info() != Eigen::Success) throw NumericalError("Lyapunov solver: Schur form did not converge");
  U_ = schur_.matrixU();
  T_ = schur_.matrixT();
  diag_.resize(0);  // set_shift must follow
}

void SchurLyapunovSolver::set_shift(double alpha, double beta) {
  alpha_ = alpha;
  beta_ = beta;
  const Eigen::Index n = T_.rows();
  diag_ = alpha_ + beta_ * T_.diagonal().array();
  const double scale = std::max(std::abs(alpha_), std::abs(beta_) * std::max(1e-300, T_.cwiseAbs().maxCoeff()));
  double smallest = INFINITY;
  for (Eigen::Index i = 0; i < n; ++i)
    for (Eigen::Index j = 0; j < n; ++j) smallest = std::min(smallest, std::abs(std::conj(diag_(i)) + diag_(j)));
  if (!(smallest > 1e-14 * scale))
    throw NumericalError("Lyapunov solver: F' X + X F = C is singular (eigenvalues of F sum to zero)");
}

void SchurLyapunovSolver::solve(const Eigen::MatrixXd& C, Eigen::MatrixXd& X) {
  const Eigen::Index n = T_.rows();
  if (diag_.size() != n) throw NumericalError("Lyapunov solver: set_shift must follow factor");
  work_.noalias() = U_.adjoint() * C * U_;  // the right-hand side in the Schur basis
  Y_.resize(n, n);
  rhs_.resize(n);
  for (Eigen::Index j = 0; j < n; ++j) {
    // Column j: (G* + G_jj I) y_j = c_j - beta sum_{k<j} y_k T_kj, G* lower triangular.
    rhs_ = work_.col(j);
    if (j > 0) rhs_.noalias() -= beta_ * (Y_.leftCols(j) * T_.col(j).head(j));
    for (Eigen::Index i = 0; i < n; ++i) {
      std::complex<double> s = rhs_(i);
      // beta sum_{k<i} conj(T_ki) y_k; Eigen's complex dot conjugates its first argument.
      if (i > 0) s -= beta_ * T_.col(i).head(i).dot(Y_.col(j).head(i));
      Y_(i, j) = s / (std::conj(diag_(i)) + diag_(j));
    }
  }
  X = (U_ * Y_ * U_.adjoint()).real();
}

}  // namespace ordex
