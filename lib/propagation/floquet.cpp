#include "propagation/floquet.hpp"

#include <algorithm>
#include <boost/math/quadrature/gauss_kronrod.hpp>
#include <cmath>
#include <complex>
#include <functional>
#include <limits>
#include <numeric>
#include <sstream>
#include <vector>

#include "io/errors.hpp"

namespace {
// Three significant digits: enough for a diagnostic line.
std::string short_number(double x) {
  std::ostringstream o;
  o.precision(3);
  o << x;
  return o.str();
}
}  // namespace

namespace ordex {

FloquetReport floquet_analysis(const Eigen::MatrixXd& monodromy, double period) {
  if (!(period > 0)) throw InputError("Floquet analysis: the period must be positive");
  if (!monodromy.allFinite()) throw NumericalError("Floquet analysis: the monodromy matrix is not finite");
  Eigen::EigenSolver<Eigen::MatrixXd> es(monodromy, false);
  if (es.info() != Eigen::Success) throw NumericalError("Floquet analysis: eigenvalues did not converge");
  Eigen::VectorXcd mu = es.eigenvalues();
  std::vector<int> idx(mu.size());
  std::iota(idx.begin(), idx.end(), 0);
  std::stable_sort(idx.begin(), idx.end(), [&](int a, int b) {
    if (std::abs(mu(a)) != std::abs(mu(b))) return std::abs(mu(a)) > std::abs(mu(b));
    return mu(a).imag() > mu(b).imag();
  });
  FloquetReport r;
  r.period = period;
  r.multipliers.resize(mu.size());
  r.exponents.resize(mu.size());
  for (int k = 0; k < mu.size(); ++k) {
    r.multipliers(k) = mu(idx[k]);
    r.exponents(k) = std::log(mu(idx[k])) / period;  // principal branch
  }
  r.largest_modulus = mu.size() ? std::abs(r.multipliers(0)) : 0;
  r.stable = r.largest_modulus < 1.0;
  return r;
}

namespace {

/// One piece [a, b] of the trace integral: a single 15-point Gauss-Kronrod application (no
/// recursion inside Boost), halved while its error estimate exceeds the piece's share of TOL.
double trace_piece(const std::function<double(double)>& f, double a, double b, double tol, int depth,
                   double& error, long& pieces) {
  double err = 0;
  const double v = boost::math::quadrature::gauss_kronrod<double, 15>::integrate(f, a, b, 0, 0.0, &err);
  if (!(err > tol) || depth <= 0 || !std::isfinite(v)) {
    ++pieces;
    error += err;
    return v;
  }
  const double m = 0.5 * (a + b);
  return trace_piece(f, a, m, 0.5 * tol, depth - 1, error, pieces) +
         trace_piece(f, m, b, 0.5 * tol, depth - 1, error, pieces);
}

}  // namespace

double integrate_trace(const Generator& g, double t0, double t1, double tol, double* error, long* evaluations,
                       long* pieces, int max_depth) {
  Eigen::MatrixXd work(g.dim, g.dim);
  long evals = 0;
  const std::function<double(double)> trace = [&](double t) {
    ++evals;
    g.eval(t, work);
    return work.trace();
  };
  const double lo = std::min(t0, t1), hi = std::max(t0, t1);
  std::vector<double> cuts{lo};
  for (double bp : g.breakpoints)
    if (bp > lo && bp < hi && bp > cuts.back()) cuts.push_back(bp);
  cuts.push_back(hi);
  // The tolerance is absolute on the integral (it adds directly to a log difference); a first
  // pass at the coarse rule sets its scale from the size of the trace.
  double scale = 0;
  {
    Eigen::MatrixXd w(g.dim, g.dim);
    g.eval(0.5 * (lo + hi), w);
    ++evals;
    scale = std::abs(w.trace()) * (hi - lo);
  }
  const double abs_tol = tol * std::max(1.0, scale);
  double integral = 0, err = 0;
  long count = 0;
  for (std::size_t k = 0; k + 1 < cuts.size(); ++k) {
    const double share = abs_tol * (cuts[k + 1] - cuts[k]) / (hi - lo);
    integral += trace_piece(trace, cuts[k], cuts[k + 1], share, max_depth, err, count);
  }
  if (error) *error = err;
  if (evaluations) *evaluations = evals;
  if (pieces) *pieces = count;
  return t1 < t0 ? -integral : integral;
}

LiouvilleReport liouville_check(const Generator& g, double t0, double t1, const Eigen::MatrixXd& phi, double tol,
                                double phi_error) {
  LiouvilleReport r;
  const double u = std::numeric_limits<double>::epsilon();
  const double n = static_cast<double>(phi.rows());
  double quad_error = 0;
  r.integral_trace = integrate_trace(g, t0, t1, tol, &quad_error, &r.trace_evaluations, &r.quadrature_pieces);
  r.exp_integral_trace = std::exp(r.integral_trace);
  if (!phi.allFinite()) {
    r.meaningful = r.passed = false;
    r.det_phi = r.log_abs_det = r.log_difference = r.relative_difference = std::numeric_limits<double>::quiet_NaN();
    r.note = "not meaningful: Phi is not finite";
    return r;
  }
  // log|det Phi| from the pivots of an LU: no product is formed, so nothing under- or overflows.
  const Eigen::PartialPivLU<Eigen::MatrixXd> lu(phi);
  const Eigen::MatrixXd& U = lu.matrixLU();
  double sign = lu.permutationP().determinant();
  double logdet = 0;
  bool singular = false;
  for (Eigen::Index i = 0; i < U.rows(); ++i) {
    const double d = U(i, i);
    if (d == 0) singular = true;
    else logdet += std::log(std::abs(d));
    if (d < 0) sign = -sign;
  }
  r.log_abs_det = singular ? -std::numeric_limits<double>::infinity() : logdet;
  r.det_phi = singular ? 0.0 : sign * std::exp(logdet);
  const double rcond = singular ? 0.0 : lu.rcond();
  r.condition = rcond > 0 ? 1.0 / rcond : std::numeric_limits<double>::infinity();
  r.log_difference = r.log_abs_det - r.integral_trace;
  r.relative_difference = std::abs(std::expm1(r.log_difference));
  // The first-order change of log det under a perturbation E is trace(Phi^-1 E), at most
  // n |Phi^-1| |E| = n cond(Phi) |E| / |Phi|. E is round-off of the LU (a few u |Phi|) plus the
  // integration error of Phi (its estimate), so this is how far log det may honestly move.
  const double norm = phi.cwiseAbs().colwise().sum().maxCoeff();
  const double rel_err = 4 * n * u + (norm > 0 ? phi_error / norm : 0.0);
  r.tolerance = 10 * n * r.condition * rel_err + 10 * quad_error + 1e-14 * std::max(1.0, std::abs(r.integral_trace));
  if (!std::isfinite(r.integral_trace)) {
    r.meaningful = r.passed = false;
    r.relative_difference = std::numeric_limits<double>::quiet_NaN();
    r.note = "not meaningful: the integral of the trace is not finite";
  } else if (singular || !(r.tolerance < 1.0)) {
    r.meaningful = r.passed = false;
    r.relative_difference = std::numeric_limits<double>::quiet_NaN();
    r.note = singular ? std::string("not meaningful: Phi is singular in double precision")
                      : "not meaningful: Phi's condition " + short_number(r.condition) +
                            " times its relative error " + short_number(rel_err) +
                            " (round-off and the estimated integration error) lets log|det Phi| move by " +
                            short_number(r.tolerance) + "; tighter tolerances make the check possible";
  } else if (sign < 0) {
    r.passed = false;
    r.note = "det Phi is negative, which no transition matrix can be: Phi is wrong";
  } else if (std::abs(r.log_difference) > r.tolerance) {
    r.passed = false;
    r.note = "log|det Phi| differs from the integral of the trace by " + format_number(r.log_difference) +
             ", more than the " + format_number(r.tolerance) +
             " that Phi's condition and error estimate explain: Phi is less accurate than estimated";
  }
  return r;
}

}  // namespace ordex
