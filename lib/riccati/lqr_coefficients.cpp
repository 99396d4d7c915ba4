#include "riccati/lqr_coefficients.hpp"

#include <cmath>

#include "io/errors.hpp"

namespace ordex {

LqrCoefficients::LqrCoefficients(const System& sys, const Weights& w)
    : sys_(sys), w_(w), n_(sys.states()), m_(sys.inputs()), t_(std::nan("")) {
  A.resize(n_, n_);
  B.resize(n_, m_);
  Q.resize(n_, n_);
  R.resize(m_, m_);
  N.resize(n_, m_);
  G_.resize(m_, n_);
  RinvBt_.resize(m_, n_);
  RinvNt_.resize(m_, n_);
  tmp_.resize(n_, n_);
}

void LqrCoefficients::at(double t) {
  if (valid_ && t == t_) return;
  valid_ = false;
  sys_.A(t, A);
  sys_.B(t, B);
  w_.Q.eval(t, Q);
  w_.R.eval(t, R);
  w_.N.eval(t, N);
  llt_.compute(R);
  if (llt_.info() != Eigen::Success)
    throw NumericalError(w_.R.name() + ": not positive definite at t = " + format_number(t));
  t_ = t;
  valid_ = true;
}

void LqrCoefficients::gain(const Eigen::MatrixXd& P, Eigen::MatrixXd& K) {
  G_.noalias() = B.transpose() * P;
  G_ += N.transpose();
  K = llt_.solve(G_);
}

void LqrCoefficients::riccati_rhs(const Eigen::MatrixXd& P, Eigen::MatrixXd& dPdt, Eigen::MatrixXd& K) {
  G_.noalias() = B.transpose() * P;
  G_ += N.transpose();
  K = llt_.solve(G_);
  tmp_.noalias() = A.transpose() * P;
  dPdt = tmp_ + tmp_.transpose();
  dPdt.noalias() -= G_.transpose() * K;
  dPdt += Q;
  tmp_ = dPdt.transpose();  // (a temporary: X = X + X' in place would alias)
  dPdt = -0.5 * (dPdt + tmp_);  // exact symmetry against rounding
}

void LqrCoefficients::hamiltonian(MatrixRef H) {
  RinvBt_ = llt_.solve(B.transpose());
  RinvNt_ = llt_.solve(N.transpose());
  // A~ = A - B R^-1 N'
  tmp_ = A;
  tmp_.noalias() -= B * RinvNt_;
  H.topLeftCorner(n_, n_) = tmp_;
  H.bottomRightCorner(n_, n_) = -tmp_.transpose();
  H.topRightCorner(n_, n_).noalias() = -B * RinvBt_;
  // Q~ = Q - N R^-1 N'
  H.bottomLeftCorner(n_, n_) = -Q;
  H.bottomLeftCorner(n_, n_).noalias() += N * RinvNt_;
}

double LqrCoefficients::running_cost(const Eigen::VectorXd& x, const Eigen::VectorXd& u) const {
  return x.dot(Q * x) + 2.0 * x.dot(N * u) + u.dot(R * u);
}

}  // namespace ordex
