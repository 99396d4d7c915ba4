#pragma once
// The Lyapunov equation F' X + X F = C in O(n^3) (Bartels-Stewart with a complex Schur form
// F = U T U*: T* Y + Y T = U* C U is solved column by column by forward substitution, then
// X = U Y U*). Used as the exact preconditioner of the Riccati equation's Newton solves, whose
// matrix I - gamma J acts on X as (I/2 + gamma Acl)' X + X (I/2 + gamma Acl).
#include <Eigen/Dense>
#include <complex>

namespace ordex {

class LyapunovSolver {
 public:
  /// Factors F (n x n). Throws NumericalError when F has eigenvalues l_i, l_j with
  /// conj(l_i) + l_j = 0 (to rounding), where the equation is singular.
  void factor(const Eigen::MatrixXd& F);
  /// X solving F' X + X F = C with the F of the last factor(). Symmetric C gives symmetric X.
  void solve(const Eigen::MatrixXd& C, Eigen::MatrixXd& X);
  int size() const { return static_cast<int>(T_.rows()); }

 private:
  Eigen::ComplexSchur<Eigen::MatrixXd> schur_;
  Eigen::MatrixXcd U_, T_, Y_, work_;
  Eigen::VectorXcd rhs_;
};

}  // namespace ordex
