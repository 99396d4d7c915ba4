#include "model/report_text.hpp"

#include <algorithm>
#include <cmath>
#include <iomanip>
#include <numeric>
#include <sstream>

namespace ordex {

namespace {

std::string name_of(const std::vector<std::string>& names, Eigen::Index i) {
  return static_cast<std::size_t>(i) < names.size() ? names[static_cast<std::size_t>(i)]
                                                    : "x" + std::to_string(i + 1);
}

/// Indices of V sorted by decreasing magnitude (ties in index order), the first COUNT.
std::vector<Eigen::Index> largest(const Eigen::VectorXd& v, int count) {
  std::vector<Eigen::Index> idx(static_cast<std::size_t>(v.size()));
  std::iota(idx.begin(), idx.end(), Eigen::Index(0));
  const std::size_t k = std::min(idx.size(), static_cast<std::size_t>(std::max(count, 0)));
  std::partial_sort(idx.begin(), idx.begin() + static_cast<std::ptrdiff_t>(k), idx.end(),
                    [&](Eigen::Index a, Eigen::Index b) {
                      const double fa = std::abs(v[a]), fb = std::abs(v[b]);
                      return fa > fb || (fa == fb && a < b);
                    });
  idx.resize(k);
  return idx;
}

}  // namespace

std::string matrix_brief(const Eigen::MatrixXd& m, const std::string& name, const std::vector<std::string>& rows,
                         const std::vector<std::string>& cols, const std::string& indent, int count) {
  std::ostringstream o;
  o << std::scientific << std::setprecision(6);
  if (m.rows() <= kBriefMaxStates && m.cols() <= kBriefMaxStates) {
    for (Eigen::Index i = 0; i < m.rows(); ++i) {
      o << indent;
      for (Eigen::Index j = 0; j < m.cols(); ++j) o << std::setw(15) << m(i, j);
      o << "\n";
    }
    return o.str();
  }
  o << std::setprecision(4);
  if (!m.allFinite()) {
    o << indent << name << " has entries that are not finite\n";
  } else {
    // Singular values give the 2-norm and the condition number at once; BDCSVD keeps a large
    // matrix affordable (values only, no vectors).
    const Eigen::VectorXd s = Eigen::BDCSVD<Eigen::MatrixXd>(m).singularValues();
    const double smax = s.size() ? s(0) : 0.0, smin = s.size() ? s(s.size() - 1) : 0.0;
    o << indent << name << " is " << m.rows() << " x " << m.cols() << ": 2-norm " << smax << ", Frobenius norm "
      << m.norm() << ", largest |entry| " << m.cwiseAbs().maxCoeff() << "\n";
    o << indent << "singular values " << smax << " .. " << smin << ", condition number ";
    if (smin > 0) o << smax / smin; else o << "inf";
    o << "\n";
  }
  const Eigen::VectorXd flat = Eigen::Map<const Eigen::VectorXd>(Eigen::MatrixXd(m.transpose()).data(), m.size());
  o << indent << "largest entries:";
  const auto top = largest(flat, count);
  for (std::size_t k = 0; k < top.size(); ++k) {
    const Eigen::Index i = top[k] / m.cols(), j = top[k] % m.cols();
    o << (k ? ", " : " ") << name << "[" << name_of(rows, i) << "][" << name_of(cols, j) << "] = " << m(i, j);
  }
  o << "\n" << indent << "(the JSON summary holds " << name << " in full)\n";
  return o.str();
}

std::string direction_brief(const Eigen::VectorXd& v, const std::vector<std::string>& names, int count) {
  std::ostringstream o;
  o.precision(4);
  auto entry = [&](Eigen::Index i) {
    o << name_of(names, i) << " " << (std::abs(v[i]) < 5e-5 ? 0.0 : v[i]);
  };
  if (v.size() <= kBriefMaxStates) {
    for (Eigen::Index i = 0; i < v.size(); ++i) {
      if (i) o << ", ";
      entry(i);
    }
    return o.str();
  }
  const auto top = largest(v, count);
  for (std::size_t k = 0; k < top.size(); ++k) {
    if (k) o << ", ";
    entry(top[k]);
  }
  double rest = 0;
  for (Eigen::Index i = 0; i < v.size(); ++i)
    if (std::find(top.begin(), top.end(), i) == top.end()) rest += v[i] * v[i];
  o << " (largest " << top.size() << " of " << v.size() << " entries; the others together " << std::sqrt(rest)
    << ")";
  return o.str();
}

std::string values_brief(const Eigen::VectorXd& values, int count) {
  std::ostringstream o;
  o.precision(6);
  const Eigen::Index n = values.size();
  if (n <= kBriefMaxStates || n <= 2 * count) {
    for (Eigen::Index i = 0; i < n; ++i) o << (i ? " " : "") << values[i];
    return o.str();
  }
  for (Eigen::Index i = 0; i < count; ++i) o << (i ? " " : "") << values[i];
  o << " ... (" << n - 2 * count << " more) ...";
  for (Eigen::Index i = n - count; i < n; ++i) o << " " << values[i];
  return o.str();
}

}  // namespace ordex
