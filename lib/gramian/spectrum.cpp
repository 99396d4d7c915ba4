#include "gramian/spectrum.hpp"

#include <Eigen/Eigenvalues>
#include <Eigen/SVD>
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

Eigen::VectorXd row_norms(const Eigen::MatrixXd& m) {
  return m.cols() ? Eigen::VectorXd(m.rowwise().norm()) : Eigen::VectorXd::Zero(m.rows());
}

/// Singular values (descending) and left singular vectors of L, padded to n columns.
void left_svd(const Eigen::MatrixXd& l, Eigen::VectorXd& sigma, Eigen::MatrixXd& u) {
  const Eigen::Index n = l.rows();
  sigma = Eigen::VectorXd::Zero(n);
  if (l.cols() == 0) {
    u = Eigen::MatrixXd::Identity(n, n);
    return;
  }
  Eigen::JacobiSVD<Eigen::MatrixXd> svd(l, Eigen::ComputeFullU);
  sigma.head(svd.singularValues().size()) = svd.singularValues();
  u = svd.matrixU();
}

}  // namespace

void StateScaling::validate(int n) const {
  if (mode != ScalingMode::Units) return;
  if (units.size() != n)
    throw InputError("GramianOptions::scaling.units: " + std::to_string(units.size()) + " entries, the model has " +
                     std::to_string(n) + " states");
  for (Eigen::Index i = 0; i < units.size(); ++i)
    if (!(std::isfinite(units[i]) && units[i] > 0))
      throw InputError("GramianOptions::scaling.units: entry " + std::to_string(i + 1) + " (" +
                       format_number(units[i]) + ") must be a positive number");
}

std::string scaling_name(ScalingMode m) {
  switch (m) {
    case ScalingMode::None: return "none";
    case ScalingMode::Units: return "units";
    case ScalingMode::Balance: return "balance";
  }
  return "balance";
}

ScalingMode parse_scaling(const std::string& text) {
  if (text == "none") return ScalingMode::None;
  if (text == "units") return ScalingMode::Units;
  if (text == "balance") return ScalingMode::Balance;
  throw InputError("GramianOptions::scaling: unknown scaling '" + text + "' (choose balance, units or none)");
}

std::string rank_status_name(RankStatus s) {
  switch (s) {
    case RankStatus::FullRank: return "full_rank";
    case RankStatus::RankDeficient: return "rank_deficient";
    case RankStatus::Undetermined: return "undetermined";
  }
  return "undetermined";
}

double factor_roundoff(int n) { return 4.0 * (n + 2) * std::numeric_limits<double>::epsilon(); }

Eigen::MatrixXd GramianFactor::product() const {
  Eigen::MatrixXd w = Eigen::MatrixXd::Zero(L.rows(), L.rows());
  w.selfadjointView<Eigen::Lower>().rankUpdate(L);
  return w.selfadjointView<Eigen::Lower>();
}

GramianFactor psd_factor(const Eigen::MatrixXd& w) {
  const Eigen::Index n = w.rows();
  const int ni = static_cast<int>(n);
  GramianFactor f;
  f.L = Eigen::MatrixXd::Zero(n, n);
  f.row_error = Eigen::VectorXd::Zero(n);
  f.graded_error = factor_roundoff(ni);
  const Eigen::MatrixXd ws = symmetrized(w);
  std::vector<Eigen::Index> keep;
  double dmax = 0;
  for (Eigen::Index i = 0; i < n; ++i) dmax = std::max(dmax, ws(i, i));
  for (Eigen::Index i = 0; i < n; ++i) {
    if (ws(i, i) > 0) keep.push_back(i);
    else if (ws(i, i) < 0 && dmax > 0) f.graded_error = std::max(f.graded_error, -ws(i, i) / dmax);
  }
  if (keep.empty()) return f;
  const Eigen::Index k = static_cast<Eigen::Index>(keep.size());
  Eigen::VectorXd d(k);
  for (Eigen::Index a = 0; a < k; ++a) d[a] = std::sqrt(ws(keep[a], keep[a]));
  Eigen::MatrixXd h(k, k);
  for (Eigen::Index a = 0; a < k; ++a)
    for (Eigen::Index b = 0; b < k; ++b) h(a, b) = ws(keep[a], keep[b]) / (d[a] * d[b]);
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> es(h);
  if (es.info() != Eigen::Success) throw NumericalError("Gramian: the symmetric eigen solver failed");
  const Eigen::VectorXd& mu = es.eigenvalues();
  f.graded_error = std::max(f.graded_error, -std::min(mu[0], 0.0));
  const Eigen::MatrixXd g = es.eigenvectors() * mu.cwiseMax(0.0).cwiseSqrt().asDiagonal();
  for (Eigen::Index a = 0; a < k; ++a) f.L.row(keep[a]).head(k) = d[a] * g.row(a);
  f.row_error = factor_roundoff(ni) * row_norms(f.L);
  return f;
}

GramianFactor join_factors(const GramianFactor& a, const GramianFactor& b) {
  const Eigen::Index n = a.L.rows();
  const int ni = static_cast<int>(n);
  Eigen::MatrixXd m(n, a.L.cols() + b.L.cols());
  m.leftCols(a.L.cols()) = a.L;
  m.rightCols(b.L.cols()) = b.L;
  GramianFactor f;
  f.graded_error = std::max(a.graded_error, b.graded_error);
  f.compressions = a.compressions + b.compressions;
  const Eigen::VectorXd norms = row_norms(m);
  f.row_error = (a.row_error.cwiseAbs2() + b.row_error.cwiseAbs2()).cwiseSqrt();
  if (m.cols() <= n) {
    f.L = std::move(m);
    return f;
  }
  // Householder QR of L' = Q R gives L L' = R' R: the factor R' (n x n, lower triangular). Its
  // backward error is column by column of L', i.e. row by row of L: a few u times each row.
  Eigen::HouseholderQR<Eigen::MatrixXd> qr(m.transpose());
  f.L = qr.matrixQR().topRows(n).triangularView<Eigen::Upper>().toDenseMatrix().transpose();
  f.row_error += factor_roundoff(ni) * norms;
  ++f.compressions;
  return f;
}

GramianFactor transform_factor(const Eigen::MatrixXd& m, const GramianFactor& f) {
  const int n = static_cast<int>(m.rows());
  GramianFactor out;
  out.L = m * f.L;
  out.compressions = f.compressions;
  // First-order bookkeeping: the rows of M L inherit the largest relative row error of L plus
  // the product's round-off. (A bound through |M| would compound over thousands of steps of an
  // oscillatory transport, whose |S_k| products grow although the S_k products do not.)
  const Eigen::VectorXd norms = row_norms(f.L);
  double rho = 0;
  for (Eigen::Index i = 0; i < norms.size(); ++i)
    if (norms[i] > 0) rho = std::max(rho, f.row_error[i] / norms[i]);
  out.row_error = (rho + factor_roundoff(n)) * row_norms(out.L);
  // Sums of semidefinite terms keep a graded bound (Cauchy-Schwarz); the route's bound is the
  // largest of the step Gramians' own.
  out.graded_error = f.graded_error;
  return out;
}

GramianSpectrum analyze_factor(const GramianFactor& f, double rank_tol, const StateScaling& scaling) {
  check_tol(rank_tol);
  const Eigen::Index n = f.L.rows();
  const int ni = static_cast<int>(n);
  if (n == 0) throw NumericalError("Gramian: empty factor");
  scaling.validate(ni);
  if (!f.L.allFinite()) throw NumericalError("Gramian: entries are not finite");
  GramianSpectrum s;
  s.rank_tol = rank_tol;

  // The Gramian itself, in the model's units: eigenvalues are squared singular values.
  Eigen::VectorXd sigma;
  Eigen::MatrixXd u;
  left_svd(f.L, sigma, u);
  s.eigenvalues = sigma.reverse().cwiseAbs2();
  s.condition = condition_of(s.eigenvalues[0], s.eigenvalues[n - 1]);
  s.weakest_direction = u.col(n - 1).normalized();
  Eigen::Index big = 0;
  s.weakest_direction.cwiseAbs().maxCoeff(&big);
  if (s.weakest_direction[big] < 0) s.weakest_direction = -s.weakest_direction;

  // The scaled Gramian S^-1 W S^-1 and its error bounds.
  Eigen::VectorXd scale = Eigen::VectorXd::Ones(n);
  if (scaling.mode == ScalingMode::Units) scale = scaling.units;
  if (scaling.mode == ScalingMode::Balance) {
    const Eigen::VectorXd r = row_norms(f.L);
    for (Eigen::Index i = 0; i < n; ++i) scale[i] = r[i] > 0 ? r[i] : 1.0;
  }
  const Eigen::MatrixXd ls = scale.cwiseInverse().asDiagonal() * f.L;
  const double dsigma = (f.row_error.cwiseQuotient(scale)).norm();  // |delta L_s|_2 <= |delta L_s|_F
  const double dw = f.graded_error * ls.squaredNorm();               // |E_s|_2 <= g trace(W_s)
  Eigen::VectorXd ss;
  Eigen::MatrixXd us;
  left_svd(ls, ss, us);
  RankVerdict& v = s.verdict;
  v.scaling = scaling_name(scaling.mode);
  v.scaled_eigenvalues = ss.reverse().cwiseAbs2();
  const double mu_max = ss[0] * ss[0];
  v.threshold = rank_tol * mu_max;
  int present = 0, unsure = 0;
  for (Eigen::Index i = 0; i < n; ++i) {
    const double lo = std::pow(std::max(0.0, ss[i] - dsigma), 2) - dw;
    const double hi = std::pow(ss[i] + dsigma, 2) + dw;
    if (lo > v.threshold && mu_max > 0) ++present;
    else if (hi > v.threshold && mu_max > 0) ++unsure;
  }
  v.rank_low = present;
  v.rank_high = present + unsure;
  const double mu_min = ss[n - 1] * ss[n - 1];
  v.error_floor = std::pow(ss[n - 1] + dsigma, 2) - mu_min + dw;
  v.status = unsure > 0 ? RankStatus::Undetermined : present == n ? RankStatus::FullRank : RankStatus::RankDeficient;
  if (v.status == RankStatus::Undetermined) {
    // The route's error shows as more indefiniteness than the eigen solver's own round-off.
    const bool route = f.graded_error > 10 * factor_roundoff(ni) && dw > std::pow(dsigma, 2);
    v.reason = std::to_string(unsure) + " scaled eigenvalue" + (unsure > 1 ? "s lie" : " lies") +
               " within " + (route ? "the route's error bound" : "the round-off floor of the factor") + " (" +
               format_number(v.error_floor) + ") of the rank threshold " + format_number(v.threshold) +
               " (rank tolerance x largest scaled eigenvalue): double precision cannot tell whether " +
               (unsure > 1 ? "they count" : "it counts");
    if (scaling.mode != ScalingMode::Balance)
      v.remedy = "balance the states (GramianOptions::scaling = balance), ";
    v.remedy += route ? "tighten rtol or use the block route, " : "";
    v.remedy += "use a shorter window, or raise the rank tolerance if directions this weak should count as missing";
  } else if (v.status == RankStatus::RankDeficient && scaling.mode != ScalingMode::Balance && mu_max > 0) {
    const GramianSpectrum balanced = analyze_factor(f, rank_tol, StateScaling{});
    if (balanced.verdict.status != RankStatus::RankDeficient) {
      v.reason = "rank deficient in these units only: with balanced states the verdict is " +
                 rank_status_name(balanced.verdict.status);
      v.remedy = "balance the states (GramianOptions::scaling = balance) or give units that fit the states";
    }
  }
  s.rank = v.rank_low;
  s.full_rank = v.status == RankStatus::FullRank;
  s.threshold = v.threshold;
  // Directions not certainly counted, weakest first, mapped back to the model's coordinates.
  const Eigen::Index missing = n - v.rank_low;
  if (missing > 0) {
    Eigen::MatrixXd m(n, missing);
    for (Eigen::Index c = 0; c < missing; ++c) m.col(c) = scale.cwiseInverse().asDiagonal() * us.col(n - 1 - c);
    Eigen::HouseholderQR<Eigen::MatrixXd> qr(m);
    s.missing_directions = qr.householderQ() * Eigen::MatrixXd::Identity(n, missing);
    for (Eigen::Index c = 0; c < missing; ++c) {
      Eigen::Index b = 0;
      s.missing_directions.col(c).cwiseAbs().maxCoeff(&b);
      if (s.missing_directions(b, c) < 0) s.missing_directions.col(c) *= -1;
    }
  } else {
    s.missing_directions.resize(n, 0);
  }
  return s;
}

GramianSpectrum analyze_gramian(const Eigen::MatrixXd& w, double rank_tol, const StateScaling& scaling) {
  check_tol(rank_tol);
  if (w.rows() == 0 || w.rows() != w.cols()) throw NumericalError("Gramian: not a square matrix");
  if (!w.allFinite()) throw NumericalError("Gramian: entries are not finite");
  return analyze_factor(psd_factor(w), rank_tol, scaling);
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
  s.status = s.rank == ev.size() ? RankStatus::FullRank : RankStatus::RankDeficient;
  return s;
}

SpectrumSummary summarize_factor(const GramianFactor& f, double rank_tol, const StateScaling& scaling) {
  const GramianSpectrum g = analyze_factor(f, rank_tol, scaling);
  SpectrumSummary s;
  s.lambda_min = g.eigenvalues[0];
  s.lambda_max = g.eigenvalues[g.eigenvalues.size() - 1];
  s.condition = g.condition;
  s.rank = g.rank;
  s.status = g.verdict.status;
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
