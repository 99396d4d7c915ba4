#pragma once
// The Lyapunov equation F' X + X F = C with F = alpha I + beta M, in O(n^3) (Bartels-Stewart
// with a complex Schur form M = U T U*: the equation becomes G* Y + Y G = U* C U with
// G = alpha I + beta T upper triangular, solved column by column by forward substitution, and
// X = U Y U*). The Schur form of M is kept across shifts, so the Riccati equation's Newton
// matrices I - gamma J, which act on X as (I/2 + gamma Acl)' X + X (I/2 + gamma Acl), reuse one
// factorization of Acl for every gamma. The Gramian's Lyapunov route uses it the same way.
#include <Eigen/Dense>
#include <complex>

namespace ordex {

class SchurLyapunovSolver {
 public:
  /// Schur form of M (n x n); set_shift must follow. Throws NumericalError when the QR
  /// iteration fails.
  void factor(const Eigen::MatrixXd& M);
  /// Chooses F = ALPHA I + BETA M. Throws NumericalError when F has eigenvalues f_i, f_j with
  /// conj(f_i) + f_j = 0 (to rounding), where the equation is singular.
  void set_shift(double alpha, double beta);
  /// X solving F' X + X F = C for the current M and shift. Symmetric C gives symmetric X.
  void solve(const Eigen::MatrixXd& C, Eigen::MatrixXd& X);
  int size() const { return static_cast<int>(T_.rows()); }

 private:
  Eigen::ComplexSchur<Eigen::MatrixXd> schur_;
  Eigen::MatrixXcd U_, T_, Y_, work_;
  Eigen::VectorXcd rhs_, diag_;
  double alpha_ = 0, beta_ = 1;
};

}  // namespace ordex
