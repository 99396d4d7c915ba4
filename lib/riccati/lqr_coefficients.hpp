#pragma once
// The plant and the weights evaluated at one time, with the quantities both Riccati solvers
// and the closed loop need. Workspace is allocated once, so evaluation in an inner loop does
// not allocate (except inside expression weights). Not thread-safe.
#include <Eigen/Dense>

#include "model/system.hpp"
#include "riccati/weights.hpp"

namespace ordex {

class LqrCoefficients {
 public:
  /// SYS and W must outlive this object.
  LqrCoefficients(const System& sys, const Weights& w);

  /// Evaluates A, B, Q, R, N at T and factors R. Throws NumericalError when R is not
  /// positive definite at T.
  void at(double t);

  /// K = R^-1 (B'P + N') with the coefficients of the last at().
  void gain(const Eigen::MatrixXd& P, Eigen::MatrixXd& K);
  /// dP/dt = -(A'P + PA - (PB + N) R^-1 (B'P + N') + Q) and the gain K, at the last at().
  /// The result is symmetric by construction (the quadratic term is G' R^-1 G).
  void riccati_rhs(const Eigen::MatrixXd& P, Eigen::MatrixXd& dPdt, Eigen::MatrixXd& K);
  /// The Hamiltonian [[A~, -B R^-1 B'], [-Q~, -A~']] (2n x 2n), A~ = A - B R^-1 N',
  /// Q~ = Q - N R^-1 N', at the last at().
  void hamiltonian(MatrixRef H);
  /// Running cost x'Q x + 2 x'N u + u'R u at the last at().
  double running_cost(const Eigen::VectorXd& x, const Eigen::VectorXd& u) const;

  int n() const { return n_; }
  int m() const { return m_; }
  double time() const { return t_; }

  Eigen::MatrixXd A, B, Q, R, N;  ///< at time()

 private:
  const System& sys_;
  const Weights& w_;
  int n_, m_;
  double t_;
  bool valid_ = false;
  Eigen::LLT<Eigen::MatrixXd> llt_;
  Eigen::MatrixXd G_, RinvBt_, RinvNt_, tmp_;
};

}  // namespace ordex
