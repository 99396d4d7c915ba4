#include "nonlinear/nominal.hpp"

#include <algorithm>
#include <cmath>

#include "io/errors.hpp"

namespace ordex {

std::shared_ptr<const NominalStates> NominalStates::integrate(PlantEvaluator& plant, const Eigen::VectorXd& x0,
                                                              double t0, double t1, const OdeOptions& options,
                                                              const std::vector<double>& breakpoints) {
  auto out = std::make_shared<NominalStates>();
  const int n = plant.states(), m = plant.inputs();
  out->n_ = n;
  out->t0_ = t0;
  out->t1_ = t1;
  Eigen::VectorXd u(std::max(m, 1));
  OdeProblem problem;
  problem.size = n;
  problem.label = plant.definition().path + ": the nominal trajectory";
  problem.rhs = [&](double t, const double* y, double* ydot) {
    plant.nominal_input(t, u.data());
    plant.f(t, y, u.data(), ydot);
  };
  std::vector<double> knot_t;
  std::vector<Eigen::VectorXd> knot_x;
  problem.on_step = [&](double t, const double* y, const double*) {
    if (!knot_t.empty() && !(t > knot_t.back())) return;
    knot_t.push_back(t);
    knot_x.push_back(Eigen::Map<const Eigen::VectorXd>(y, n));
  };
  const std::vector<std::string>& names = plant.definition().info.state_names;
  problem.name_of = [&](int i) { return names[static_cast<std::size_t>(i)]; };
  for (double b : breakpoints)
    if (b > t0 && b < t1) problem.breakpoints.push_back(b);
  OdeOptions o = options;
  o.rtol = std::max(options.rtol * 1e-2, 1e-13);
  o.atol = std::max(options.atol * 1e-2, 1e-300);
  o.max_step = (t1 - t0) / 2000;
  if (options.max_step > 0) o.max_step = std::min(o.max_step, options.max_step);
  OdeIntegrator ode(problem, o);
  knot_t.push_back(t0);
  knot_x.push_back(x0);
  ode.reset(t0, x0.data());
  Eigen::VectorXd y(n);
  ode.advance(t1, y.data());
  if (knot_t.back() < t1) {
    knot_t.push_back(t1);
    knot_x.push_back(y);
  }
  const std::size_t K = knot_t.size();
  out->times_ = knot_t;
  out->x_.resize(n, static_cast<Eigen::Index>(K));
  for (std::size_t k = 0; k < K; ++k) out->x_.col(static_cast<Eigen::Index>(k)) = knot_x[k];
  out->s0_.resize(n, static_cast<Eigen::Index>(K - 1));
  out->s1_.resize(n, static_cast<Eigen::Index>(K - 1));
  Eigen::VectorXd s(n);
  for (std::size_t k = 0; k + 1 < K; ++k) {
    const double a = knot_t[k], b = knot_t[k + 1], nudge = 1e-10 * (b - a);
    problem.rhs(a + nudge, knot_x[k].data(), s.data());
    out->s0_.col(static_cast<Eigen::Index>(k)) = s;
    problem.rhs(b - nudge, knot_x[k + 1].data(), s.data());
    out->s1_.col(static_cast<Eigen::Index>(k)) = s;
  }
  if (!out->x_.allFinite() || !out->s0_.allFinite() || !out->s1_.allFinite())
    throw NumericalError(problem.label + ": not finite");
  return out;
}

std::shared_ptr<const NominalStates> NominalStates::from_table(std::shared_ptr<const TimeTable> table,
                                                               std::vector<int> columns) {
  auto out = std::make_shared<NominalStates>();
  out->n_ = static_cast<int>(columns.size());
  out->t0_ = table->first_time();
  out->t1_ = table->last_time();
  out->table_ = std::move(table);
  out->columns_ = std::move(columns);
  return out;
}

void NominalStates::state(double t, double* x) const {
  t = std::min(std::max(t, t0_), t1_);
  if (table_) {
    for (int i = 0; i < n_; ++i) x[i] = table_->value(columns_[static_cast<std::size_t>(i)], t);
    return;
  }
  std::size_t k = static_cast<std::size_t>(std::upper_bound(times_.begin(), times_.end(), t) - times_.begin());
  k = k == 0 ? 0 : k - 1;
  if (k + 1 >= times_.size()) k = times_.size() - 2;
  const double a = times_[k], h = times_[k + 1] - a, s = (t - a) / h;
  // Cubic Hermite basis.
  const double h00 = (1 + 2 * s) * (1 - s) * (1 - s), h10 = s * (1 - s) * (1 - s);
  const double h01 = s * s * (3 - 2 * s), h11 = s * s * (s - 1);
  const Eigen::Index c = static_cast<Eigen::Index>(k);
  for (int i = 0; i < n_; ++i)
    x[i] = h00 * x_(i, c) + h10 * h * s0_(i, c) + h01 * x_(i, c + 1) + h11 * h * s1_(i, c);
}

}  // namespace ordex
