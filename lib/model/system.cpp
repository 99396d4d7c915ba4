#include "model/system.hpp"

#include <algorithm>
#include <cmath>

#include "io/errors.hpp"

namespace ordex {
namespace {

void require_in_span(const SystemInfo& info, double a, double b, const std::string& what) {
  if (!info.defined_span) return;
  const double lo = std::min(a, b), hi = std::max(a, b);
  const auto [first, last] = *info.defined_span;
  // The same relative slack the tables allow at their ends.
  const double slack = 1e-12 * std::max(1.0, last - first);
  if (lo < first - slack || hi > last + slack)
    throw InputError(what + ": the window [" + format_number(a) + ", " + format_number(b) +
                     "] reaches outside the times of " + info.defined_by + " [" + format_number(first) +
                     ", " + format_number(last) + "]");
}

}  // namespace

Eigen::MatrixXd System::A(double t) const {
  Eigen::MatrixXd m(states(), states());
  A(t, m);
  return m;
}
Eigen::MatrixXd System::B(double t) const {
  Eigen::MatrixXd m(states(), inputs());
  if (inputs() > 0) B(t, m);
  return m;
}
Eigen::MatrixXd System::C(double t) const {
  Eigen::MatrixXd m(outputs(), states());
  if (outputs() > 0) C(t, m);
  return m;
}
Eigen::MatrixXd System::D(double t) const {
  Eigen::MatrixXd m = Eigen::MatrixXd::Zero(outputs(), inputs());
  if (outputs() > 0 && inputs() > 0) D(t, m);
  return m;
}

void System::check_finite_at(double t) const {
  const Eigen::MatrixXd m[] = {A(t), B(t), C(t), D(t)};
  const char* names[] = {"A", "B", "C", "D"};
  for (int k = 0; k < 4; ++k)
    for (Eigen::Index i = 0; i < m[k].rows(); ++i)
      for (Eigen::Index j = 0; j < m[k].cols(); ++j)
        if (!std::isfinite(m[k](i, j)))
          throw InputError(info_.source + ": " + names[k] + "[" + std::to_string(i + 1) + "][" +
                           std::to_string(j + 1) + "] is " + format_number(m[k](i, j)) + " at t = " +
                           format_number(t));
}

void System::require_defined_on(double a, double b, const std::string& what) const {
  require_in_span(info_, a, b, what);
  check_finite_at(a);
}

std::vector<double> System::breakpoints_between(double a, double b, std::vector<std::string>* notes) const {
  double lo = std::min(a, b), hi = std::max(a, b);
  std::vector<double> out;
  for (double t : info_.breakpoints)
    if (t > lo && t < hi) out.push_back(t);
  for (double t : switching_times(lo, hi, notes))
    if (t > lo && t < hi) out.push_back(t);
  std::sort(out.begin(), out.end());
  out.erase(std::unique(out.begin(), out.end()), out.end());
  return out;
}

}  // namespace ordex
