#include "gramian/spectrum.hpp"

#include <Eigen/Eigenvalues>
#include <cmath>
#include <limits>
#include <sstream>

#include "gramian/gramian.hpp"
#include "io/errors.hpp"

namespace ordex {

namespace {

void check_tol(double rank_tol) {
  if (!(rank_tol > 0 && rank_tol < 1))
    throw InputError("--rank-tol: " + format_number(rank_tol) + " is not in (0, 1)");
}

double condition_of(double lmin, double lmax) {
  return lmin > 0 ? lmax / lmin : std::numeric_limits<double>::infinity();
}

int rank_of(const Eigen::VectorXd& ev, double threshold) {
  int r = 0;
  for (Eigen::Index i = 0; i < ev.size(); ++i) r += ev[i] > threshold ? 1 : 0;
  return r;
}

}  // namespace

GramianSpectrum analyze_gramian(const Eigen::MatrixXd& w, double rank_tol) {
  check_tol(rank_tol);
  if (w.rows() == 0 || w.rows() != w.cols()) throw NumericalError("Gramian: not a square matrix");
  if (!w.allFinite()) throw NumericalError("Gramian: entries are not finite");
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> es(symmetrized(w));
  if (es.info() != Eigen::Success) throw NumericalError("Gramian: the symmetric eigen solver failed");
  GramianSpectrum s;
  s.rank_tol = rank_tol;
  s.eigenvalues = es.eigenvalues();
  const Eigen::Index n = w.rows();
  const double lmax = s.eigenvalues[n - 1], lmin = s.eigenvalues[0];
  s.condition = condition_of(lmin, lmax);
  s.threshold = rank_tol * std::max(lmax, 0.0);
  s.rank = lmax > 0 ? rank_of(s.eigenvalues, s.threshold) : 0;
  s.full_rank = s.rank == n;
  s.weakest_direction = es.eigenvectors().col(0).normalized();
  Eigen::Index big = 0;
  s.weakest_direction.cwiseAbs().maxCoeff(&big);
  if (s.weakest_direction[big] < 0) s.weakest_direction = -s.weakest_direction;
  s.missing_directions = es.eigenvectors().leftCols(n - s.rank);
  if (n - s.rank > 0) s.missing_directions.col(0) = s.weakest_direction;
  return s;
}

SpectrumSummary summarize_spectrum(const Eigen::MatrixXd& w, double rank_tol) {
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> es(symmetrized(w), Eigen::EigenvaluesOnly);
  if (es.info() != Eigen::Success || !w.allFinite())
    throw NumericalError("Gramian: the symmetric eigen solver failed");
  const Eigen::VectorXd& ev = es.eigenvalues();
  SpectrumSummary s;
  s.lambda_min = ev[0];
  s.lambda_max = ev[ev.size() - 1];
  s.condition = condition_of(s.lambda_min, s.lambda_max);
  s.rank = s.lambda_max > 0 ? rank_of(ev, rank_tol * s.lambda_max) : 0;
  return s;
}

std::string describe_direction(const Eigen::VectorXd& v, const std::vector<std::string>& names) {
  std::ostringstream o;
  o.precision(4);
  for (Eigen::Index i = 0; i < v.size(); ++i) {
    if (i) o << ", ";
    o << (static_cast<std::size_t>(i) < names.size() ? names[i] : "x" + std::to_string(i + 1)) << " "
      << (std::abs(v[i]) < 5e-5 ? 0.0 : v[i]);
  }
  return o.str();
}

}  // namespace ordex
