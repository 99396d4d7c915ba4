#include "nonlinear/linearized_system.hpp"

#include <cmath>
#include <limits>

#include "io/errors.hpp"

namespace ordex {

LinearizedSystem::LinearizedSystem(std::unique_ptr<PlantEvaluator> plant, std::shared_ptr<const NominalStates> nominal,
                                   SystemInfo info)
    : plant_(std::move(plant)), nominal_(std::move(nominal)) {
  info_ = std::move(info);
  const int n = states(), m = inputs(), p = outputs();
  x_.setZero(n);
  u_.setZero(std::max(m, 1));
  a_.setZero(n, n);
  b_.setZero(n, m);
  c_.setZero(p, n);
  d_.setZero(p, m);
}

void LinearizedSystem::nominal(double t, double* x, double* u) const {
  nominal_->state(t, x);
  if (inputs() > 0) plant_->nominal_input(t, u);
}

void LinearizedSystem::refresh(double t) const {
  if (t == last_t_) return;
  nominal(t, x_.data(), u_.data());
  plant_->jacobians(t, x_.data(), u_.data(), a_, b_);
  if (outputs() > 0) plant_->output_jacobians(t, x_.data(), u_.data(), c_, d_);
  last_t_ = t;
}

void LinearizedSystem::A(double t, MatrixRef out) const {
  refresh(t);
  out = a_;
}
void LinearizedSystem::B(double t, MatrixRef out) const {
  refresh(t);
  out = b_;
}
void LinearizedSystem::C(double t, MatrixRef out) const {
  refresh(t);
  out = c_;
}
void LinearizedSystem::D(double t, MatrixRef out) const {
  refresh(t);
  out = d_;
}

void LinearizedSystem::check_finite_at(double t) const {
  refresh(t);
  const SymbolicDynamics& d = plant_->definition().dynamics;
  auto check = [&](const Eigen::MatrixXd& M, const std::vector<SymbolicDynamics::Entry>& entries) {
    for (const auto& e : entries)
      if (!std::isfinite(M(e.row, e.col)))
        throw InputError(plant_->definition().path + ": " + e.key + " = '" + e.text + "' is not finite (" +
                         format_number(M(e.row, e.col)) + ") on the nominal at t = " + format_number(t));
  };
  check(a_, d.dfdx);
  check(b_, d.dfdu);
  check(c_, d.dhdx);
  check(d_, d.dhdu);
  System::check_finite_at(t);
}

std::unique_ptr<System> LinearizedSystem::clone() const {
  return std::make_unique<LinearizedSystem>(plant_->clone(), nominal_, info_);
}

}  // namespace ordex
