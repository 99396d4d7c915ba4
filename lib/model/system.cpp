#include "model/system.hpp"

#include <algorithm>

#include "io/errors.hpp"

namespace ordex {

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

void System::require_defined_on(double a, double b, const std::string& what) const {
  if (!info_.defined_span) return;
  const double lo = std::min(a, b), hi = std::max(a, b);
  const auto [first, last] = *info_.defined_span;
  // The same relative slack the tables allow at their ends.
  const double slack = 1e-12 * std::max(1.0, last - first);
  if (lo < first - slack || hi > last + slack)
    throw InputError(what + ": the window [" + format_number(a) + ", " + format_number(b) +
                     "] reaches outside the times of " + info_.defined_by + " [" + format_number(first) +
                     ", " + format_number(last) + "]");
}

std::vector<double> System::breakpoints_between(double a, double b) const {
  double lo = std::min(a, b), hi = std::max(a, b);
  std::vector<double> out;
  for (double t : info_.breakpoints)
    if (t > lo && t < hi) out.push_back(t);
  std::sort(out.begin(), out.end());
  return out;
}

}  // namespace ordex
