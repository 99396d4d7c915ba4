#include "model/time_table.hpp"

#include <algorithm>
#include <cmath>
#include <fstream>
#include <set>
#include <utility>

#include "io/csv.hpp"
#include "io/errors.hpp"
#include "model/expression.hpp"

namespace ordex {
namespace {

double sign(double x) { return (x > 0) - (x < 0); }

// One-sided three-point slope at an end, limited to keep the curve's shape (the usual
// shape-preserving end condition of monotone piecewise cubic interpolation, Fritsch & Carlson,
// SIAM J. Numer. Anal. 17 (1980) 238-246, and scipy's PchipInterpolator, which the tests
// compare against): H0, M0 belong to the end interval, H1, M1 to its neighbour.
double end_slope(double h0, double h1, double m0, double m1) {
  double d = ((2 * h0 + h1) * m0 - h0 * m1) / (h0 + h1);
  if (sign(d) != sign(m0)) return 0.0;
  if (sign(m0) != sign(m1) && std::fabs(d) > 3 * std::fabs(m0)) return 3 * m0;
  return d;
}

}  // namespace

void TableOptions::validate(const std::string& where) const {
  if (file.empty()) throw InputError(where + ".file: missing (the CSV file of the table)");
}

const char* to_string(Interpolation i) { return i == Interpolation::linear ? "linear" : "pchip"; }
const char* to_string(OutsidePolicy o) { return o == OutsidePolicy::error ? "error" : "hold"; }

TimeTable::TimeTable(const TableOptions& options) : options_(options) {
  CsvTable csv = read_csv(options.file);
  const int hline = csv.header_line;
  if (csv.header.size() < 2)
    throw InputError(options.file + ":" + std::to_string(hline) +
                     ": the table needs column t and at least one more column");
  if (csv.header[0] != "t")
    throw InputError(options.file + ":" + std::to_string(hline) + ": the first column must be named 't', not '" +
                     csv.header[0] + "'");
  int min_rows = options.interpolation == Interpolation::pchip ? 4 : 2;
  if (csv.values.rows() < min_rows)
    throw InputError(options.file + ": " + std::to_string(csv.values.rows()) + " data rows; " +
                     to_string(options.interpolation) + " interpolation needs at least " +
                     std::to_string(min_rows));
  require_time_column(csv, min_rows);
  std::set<std::string> seen;
  for (std::size_t j = 1; j < csv.header.size(); ++j) {
    const std::string& name = csv.header[j];
    std::string problem = symbol_name_problem(name);
    if (!problem.empty())
      throw InputError(options.file + ":" + std::to_string(hline) + ": column " +
                       std::to_string(j + 1) + ": " + problem + " (table columns become symbols)");
    if (!seen.insert(name).second)
      throw InputError(options.file + ":" + std::to_string(hline) + ": column '" + name +
                       "' appears twice");
    columns_.push_back(name);
  }
  const Eigen::Index rows = csv.values.rows();
  times_.resize(static_cast<std::size_t>(rows));
  for (Eigen::Index i = 0; i < rows; ++i) times_[i] = csv.values(i, 0);
  values_.resize(columns_.size());
  for (std::size_t c = 0; c < columns_.size(); ++c) {
    values_[c].resize(static_cast<std::size_t>(rows));
    for (Eigen::Index i = 0; i < rows; ++i) values_[c][i] = csv.values(i, static_cast<Eigen::Index>(c + 1));
  }
  compute_slopes();
}

TimeTable::TimeTable(const TableOptions& options, std::vector<std::string> columns, std::vector<double> times,
                     std::vector<std::vector<double>> values)
    : options_(options), columns_(std::move(columns)), times_(std::move(times)), values_(std::move(values)) {
  const std::string& what = options_.file;
  const std::size_t min_rows = options_.interpolation == Interpolation::pchip ? 4 : 2;
  if (times_.size() < min_rows)
    throw InputError(what + ": " + std::to_string(times_.size()) + " sample times; " +
                     to_string(options_.interpolation) + " interpolation needs at least " +
                     std::to_string(min_rows));
  for (std::size_t k = 0; k < times_.size(); ++k) {
    if (!std::isfinite(times_[k]))
      throw InputError(what + ": sample time " + std::to_string(k) + " is not finite");
    if (k > 0 && !(times_[k] > times_[k - 1]))
      throw InputError(what + ": sample times must be strictly increasing (time " + std::to_string(k) + " = " +
                       format_number(times_[k]) + " follows " + format_number(times_[k - 1]) + ")");
  }
  if (values_.size() != columns_.size())
    throw InputError(what + ": " + std::to_string(values_.size()) + " value columns for " +
                     std::to_string(columns_.size()) + " names");
  for (std::size_t c = 0; c < values_.size(); ++c) {
    if (values_[c].size() != times_.size())
      throw InputError(what + ": column '" + columns_[c] + "' has " + std::to_string(values_[c].size()) +
                       " samples for " + std::to_string(times_.size()) + " times");
    for (std::size_t k = 0; k < times_.size(); ++k)
      if (!std::isfinite(values_[c][k]))
        throw InputError(what + ": " + columns_[c] + " at sample " + std::to_string(k) + " (t = " +
                         format_number(times_[k]) + ") is not finite");
  }
  compute_slopes();
}

void TimeTable::compute_slopes() {
  if (options_.interpolation != Interpolation::pchip) return;
  // Slopes of Fritsch & Butland (SIAM J. Sci. Stat. Comput. 5 (1984) 300-304): a weighted
  // harmonic mean of the neighbouring secants, zero where they differ in sign, so the curve
  // never overshoots the samples.
  const std::vector<double>& x = times_;
  const std::size_t n = x.size();
  slopes_.resize(columns_.size());
  for (std::size_t c = 0; c < columns_.size(); ++c) {
    const std::vector<double>& y = values_[c];
    std::vector<double>& s = slopes_[c];
    s.assign(n, 0.0);
    for (std::size_t k = 1; k + 1 < n; ++k) {
      double h0 = x[k] - x[k - 1], h1 = x[k + 1] - x[k];
      double d0 = (y[k] - y[k - 1]) / h0, d1 = (y[k + 1] - y[k]) / h1;
      if (d0 == 0 || d1 == 0 || sign(d0) != sign(d1)) continue;
      double w1 = 2 * h1 + h0, w2 = h1 + 2 * h0;
      s[k] = (w1 + w2) / (w1 / d0 + w2 / d1);
    }
    double h0 = x[1] - x[0], h1 = x[2] - x[1];
    s[0] = end_slope(h0, h1, (y[1] - y[0]) / h0, (y[2] - y[1]) / h1);
    double hn = x[n - 1] - x[n - 2], hm = x[n - 2] - x[n - 3];
    s[n - 1] = end_slope(hn, hm, (y[n - 1] - y[n - 2]) / hn, (y[n - 2] - y[n - 3]) / hm);
  }
}

std::vector<double> TimeTable::breakpoints() const {
  if (options_.interpolation == Interpolation::linear) return times_;
  return {times_.front(), times_.back()};
}

double TimeTable::clamp_time(double t) const {
  double a = times_.front(), b = times_.back();
  double slack = 1e-12 * std::max({b - a, std::fabs(a), std::fabs(b)});
  if (t >= a && t <= b) return t;
  if (options_.outside == OutsidePolicy::error && !(t >= a - slack && t <= b + slack))
    throw NumericalError(options_.file + ": t = " + format_number(t) +
                         " is outside the table's times [" + format_number(a) + ", " +
                         format_number(b) + "] (the table's outside = \"error\")");
  return t < a ? a : b;  // NaN never reaches here under "error"; under "hold" it gives b
}

std::size_t TimeTable::interval(double t) const {
  std::size_t k = static_cast<std::size_t>(
      std::upper_bound(times_.begin(), times_.end(), t) - times_.begin());
  k = k == 0 ? 0 : k - 1;
  return std::min(k, times_.size() - 2);
}

double TimeTable::at(std::size_t c, std::size_t k, double t) const {
  const std::vector<double>& y = values_[c];
  double h = times_[k + 1] - times_[k];
  double w = (t - times_[k]) / h;
  if (w == 1.0) return y[k + 1];
  if (options_.interpolation == Interpolation::linear) return y[k] + w * (y[k + 1] - y[k]);
  // Cubic Hermite basis on [times_[k], times_[k+1]] with the samples and their slopes.
  const std::vector<double>& s = slopes_[c];
  double w2 = w * w, w3 = w2 * w;
  return (2 * w3 - 3 * w2 + 1) * y[k] + (w3 - 2 * w2 + w) * h * s[k] + (-2 * w3 + 3 * w2) * y[k + 1] +
         (w3 - w2) * h * s[k + 1];
}

void TimeTable::evaluate(double t, double* out) const {
  t = clamp_time(t);
  std::size_t k = interval(t);  // one search serves every column
  for (std::size_t c = 0; c < columns_.size(); ++c) out[c] = at(c, k, t);
}

double TimeTable::value(int column, double t) const {
  t = clamp_time(t);
  return at(static_cast<std::size_t>(column), interval(t), t);
}

}  // namespace ordex
