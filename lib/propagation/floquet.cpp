#include "propagation/floquet.hpp"

#include <algorithm>
#include <boost/math/quadrature/gauss_kronrod.hpp>
#include <cmath>
#include <complex>
#include <numeric>
#include <vector>

#include "io/errors.hpp"

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

LiouvilleReport liouville_check(const Generator& g, double t0, double t1, const Eigen::MatrixXd& phi,
                                double tol) {
  Eigen::MatrixXd work(g.dim, g.dim);
  auto trace = [&](double t) {
    g.eval(t, work);
    return work.trace();
  };
  double lo = std::min(t0, t1), hi = std::max(t0, t1);
  std::vector<double> cuts{lo};
  for (double bp : g.breakpoints)
    if (bp > lo && bp < hi) cuts.push_back(bp);
  cuts.push_back(hi);
  double integral = 0;
  for (std::size_t k = 0; k + 1 < cuts.size(); ++k) {
    double err = 0;
    integral += boost::math::quadrature::gauss_kronrod<double, 31>::integrate(
        trace, cuts[k], cuts[k + 1], 15, tol * 1e-2, &err);
  }
  if (t1 < t0) integral = -integral;
  LiouvilleReport r;
  r.det_phi = phi.determinant();
  r.exp_integral_trace = std::exp(integral);
  r.relative_difference = std::abs(r.det_phi - r.exp_integral_trace) /
                          std::max(std::abs(r.exp_integral_trace), 1e-300);
  return r;
}

}  // namespace ordex
