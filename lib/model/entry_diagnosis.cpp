#include "model/entry_diagnosis.hpp"

#include <algorithm>
#include <cmath>
#include <exception>

#include "io/errors.hpp"
#include "model/system.hpp"

namespace ordex {

namespace {

bool bad(double v) { return !std::isfinite(v) || std::abs(v) > kHugeEntry; }

std::string verdict(const std::string& name, double v, double t) {
  if (!std::isfinite(v)) return name + " is not finite at t = " + format_number(t);
  return name + " = " + format_number(v) + " at t = " + format_number(t) +
         " is too large to compute with (beyond 1e150, products of entries overflow)";
}

}  // namespace

std::string diagnose_entry_values(const std::vector<std::string>& names, const EntryEvaluator& eval, double t,
                                  double direction) {
  const std::size_t m = names.size();
  if (m == 0 || !std::isfinite(t)) return "";
  std::vector<double> v0(m), v(m);
  if (!eval(t, v0)) return "";
  for (std::size_t i = 0; i < m; ++i)
    if (bad(v0[i])) return verdict(names[i], v0[i], t);
  // Probe ahead at geometrically growing distances: a pole or a zero divisor within a few
  // percent of |t| (the engine stopped just before it) shows as a non-finite or huge value, or
  // as growth by many orders of magnitude.
  const double dir = direction < 0 ? -1.0 : 1.0;
  const double s = std::max(1.0, std::abs(t));
  std::vector<double> probes;
  for (double d = 1e-15 * s; d <= 0.125 * s; d *= 2) probes.push_back(d);
  // Per entry, the probe where it is largest relative to its value at t.
  std::vector<double> best_ratio(m, 0.0);
  std::vector<std::size_t> best_probe(m, 0);
  for (std::size_t k = 0; k < probes.size(); ++k) {
    if (!eval(t + dir * probes[k], v)) break;
    for (std::size_t i = 0; i < m; ++i) {
      if (bad(v[i])) {
        // Bisection between the last sound probe and this one for where entry i goes bad.
        double lo = k ? probes[k - 1] : 0.0, hi = probes[k];
        for (int it = 0; it < 200; ++it) {
          const double mid = 0.5 * (lo + hi);
          if (!(mid > lo && mid < hi)) break;
          if (!eval(t + dir * mid, v)) break;
          if (bad(v[i])) hi = mid;
          else lo = mid;
        }
        const double tb = t + dir * hi;
        eval(tb, v);
        return verdict(names[i], v[i], tb);
      }
      const double ratio = std::abs(v[i]) / (std::abs(v0[i]) + 1e-300);
      if (ratio > best_ratio[i]) {
        best_ratio[i] = ratio;
        best_probe[i] = k;
      }
    }
  }
  // A pole between probes shows only as growth: search for the peak of |value| between the
  // neighbours of the largest probe (golden section; |value| rises toward a pole from either
  // side), then look at the doubles around it. A peak that stays modest is no breakdown.
  std::vector<std::size_t> order;
  for (std::size_t i = 0; i < m; ++i)
    if (best_ratio[i] > 2) order.push_back(i);
  std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return best_ratio[a] > best_ratio[b]; });
  if (order.size() > 3) order.resize(3);
  for (std::size_t i : order) {
    const std::size_t k = best_probe[i];
    double a = k ? probes[k - 1] : 0.0, b = k + 1 < probes.size() ? probes[k + 1] : probes[k];
    auto mag = [&](double d) {
      return eval(t + dir * d, v) ? (std::isfinite(v[i]) ? std::abs(v[i]) : HUGE_VAL) : 0.0;
    };
    const double g = 0.5 * (std::sqrt(5.0) - 1);
    double c = b - g * (b - a), e = a + g * (b - a);
    double fc = mag(c), fe = mag(e);
    for (int it = 0; it < 200; ++it) {
      if (fc == HUGE_VAL || fe == HUGE_VAL) break;
      if (fc > fe) {
        b = e;
        e = c;
        fe = fc;
        c = b - g * (b - a);
        fc = mag(c);
      } else {
        a = c;
        c = e;
        fc = fe;
        e = a + g * (b - a);
        fe = mag(e);
      }
      if (!(c > a && e < b && c < e)) break;
    }
    const double tp = t + dir * (fc >= fe ? c : e);
    // The pole itself is usually a double a few units in the last place away: look there.
    double probe = tp;
    for (int j = 0; j < 8; ++j) probe = std::nextafter(probe, -HUGE_VAL);
    for (int j = 0; j < 17; ++j, probe = std::nextafter(probe, HUGE_VAL))
      if (eval(probe, v) && bad(v[i])) return verdict(names[i], v[i], probe);
    if (eval(tp, v) && std::abs(v[i]) > 1e6 * (std::abs(v0[i]) + 1.0))
      return names[i] + " grows without bound near t = " + format_number(tp) + " (|value| reaches " +
             format_number(std::abs(v[i])) + ")";
  }
  return "";
}

std::string System::diagnose_entries(double t, double direction) const {
  std::vector<std::string> names;
  const int n = states(), m = inputs(), p = outputs();
  auto add = [&](const char* mat, int rows, int cols) {
    for (int i = 0; i < rows; ++i)
      for (int j = 0; j < cols; ++j)
        names.push_back(std::string(mat) + "[" + std::to_string(i + 1) + "][" + std::to_string(j + 1) + "]");
  };
  add("A", n, n);
  if (m > 0) add("B", n, m);
  if (p > 0) add("C", p, n);
  Eigen::MatrixXd a(n, n), b(n, m), c(p, n);
  const EntryEvaluator eval = [&](double tt, std::vector<double>& out) {
    try {
      A(tt, a);
      if (m > 0) B(tt, b);
      if (p > 0) C(tt, c);
    } catch (const std::exception&) {
      return false;
    }
    std::size_t k = 0;
    for (int i = 0; i < n; ++i)
      for (int j = 0; j < n; ++j) out[k++] = a(i, j);
    for (int i = 0; i < n && m > 0; ++i)
      for (int j = 0; j < m; ++j) out[k++] = b(i, j);
    for (int i = 0; i < p; ++i)
      for (int j = 0; j < n; ++j) out[k++] = c(i, j);
    return true;
  };
  const std::string d = diagnose_entry_values(names, eval, t, direction);
  return d.empty() || info_.source.empty() ? d : info_.source + ": " + d;
}

std::vector<double> System::switching_times(double, double, std::vector<std::string>*) const { return {}; }

}  // namespace ordex
