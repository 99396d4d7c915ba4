#include "model/system.hpp"

#include <algorithm>

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

std::vector<double> System::breakpoints_between(double a, double b) const {
  double lo = std::min(a, b), hi = std::max(a, b);
  std::vector<double> out;
  for (double t : info_.breakpoints)
    if (t > lo && t < hi) out.push_back(t);
  std::sort(out.begin(), out.end());
  return out;
}

}  // namespace ordex
