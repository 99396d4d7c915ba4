#include "response/input_history.hpp"

#include <algorithm>
#include <cmath>

#include "io/csv.hpp"
#include "io/errors.hpp"

namespace ordex {
namespace {

std::string join(const std::vector<std::string>& names) {
  std::string s;
  for (std::size_t i = 0; i < names.size(); ++i) s += (i ? "," : "") + names[i];
  return s;
}

}  // namespace

std::string hold_name(Hold hold) { return hold == Hold::Zoh ? "zoh" : "linear"; }

Hold parse_hold(const std::string& name, const std::string& what) {
  if (name == "zoh") return Hold::Zoh;
  if (name == "linear") return Hold::Linear;
  throw InputError(what + ": unknown hold '" + name + "' (choose zoh or linear)");
}

std::string InputHistory::where(std::size_t k) const {
  if (k < lines.size()) return source + ":" + std::to_string(lines[k]);
  return source;
}

InputHistory read_input_history(const std::string& path, const System& sys) {
  CsvTable table = read_csv(path);
  const std::vector<std::string>& names = sys.info().input_names;
  std::vector<std::string> expected{"t"};
  expected.insert(expected.end(), names.begin(), names.end());
  if (table.header != expected) {
    std::string where = path + ":" + std::to_string(table.header_line) + ": ";
    if (names.empty())
      throw InputError(where + "the model has no inputs, so an input history is not used");
    throw InputError(where + "header " + quote_clipped(join(table.header)) +
                     " does not match the model's inputs (expected " + quote_clipped(join(expected)) + ")");
  }
  require_time_column(table, 2);
  InputHistory h;
  h.source = path;
  h.times.resize(static_cast<std::size_t>(table.values.rows()));
  for (Eigen::Index i = 0; i < table.values.rows(); ++i) h.times[i] = table.values(i, 0);
  h.values = table.values.rightCols(table.values.cols() - 1);
  h.lines = table.line_of_row;
  return h;
}

InputHistory make_input_history(std::vector<double> times, Eigen::MatrixXd values, std::string source) {
  if (times.size() < 2) throw InputError(source + ": an input history needs at least two samples");
  if (static_cast<Eigen::Index>(times.size()) != values.rows())
    throw InputError(source + ": " + std::to_string(times.size()) + " times but " +
                     std::to_string(values.rows()) + " rows of input values");
  for (std::size_t k = 0; k < times.size(); ++k) {
    // A model without inputs has a matrix with no columns: no row to look at (and its data
    // pointer is null, so even an empty row view would offset it).
    if (!std::isfinite(times[k]) || (values.cols() > 0 && !values.row(k).allFinite()))
      throw InputError(source + ": sample " + std::to_string(k) + " is not finite");
    if (k > 0 && !(times[k] > times[k - 1]))
      throw InputError(source + ": sample " + std::to_string(k) + ": t is not strictly increasing");
  }
  InputHistory h;
  h.source = std::move(source);
  h.times = std::move(times);
  h.values = std::move(values);
  return h;
}

std::size_t interval_of(const std::vector<double>& times, double t) {
  auto it = std::upper_bound(times.begin(), times.end(), t);
  std::size_t j = it == times.begin() ? 0 : static_cast<std::size_t>(it - times.begin()) - 1;
  return std::min(j, times.size() - 2);
}

void input_on_interval(const InputHistory& h, Hold hold, std::size_t j, double t,
                       Eigen::Ref<Eigen::VectorXd> u) {
  if (hold == Hold::Zoh) {
    u = h.values.row(j).transpose();
    return;
  }
  double a = h.times[j], b = h.times[j + 1];
  double s = (t - a) / (b - a);
  u = (1.0 - s) * h.values.row(j).transpose() + s * h.values.row(j + 1).transpose();
}

void input_at(const InputHistory& h, Hold hold, double t, Eigen::Ref<Eigen::VectorXd> u) {
  if (hold == Hold::Zoh && t >= h.times.back()) {
    u = h.values.row(h.values.rows() - 1).transpose();
    return;
  }
  input_on_interval(h, hold, interval_of(h.times, t), t, u);
}

std::string window_fit_warning(const InputHistory& h, double t0, double t1) {
  const double lo = std::min(t0, t1), hi = std::max(t0, t1);
  const auto first = std::lower_bound(h.times.begin(), h.times.end(), lo);
  const auto last = std::upper_bound(h.times.begin(), h.times.end(), hi);
  const std::size_t inside = static_cast<std::size_t>(last - first);
  const std::size_t n = h.times.size();
  // A history that has few samples of its own is not suspicious; one whose samples mostly miss
  // the window is (times in milliseconds against a window in seconds).
  if (inside >= kFewSamplesInWindow || inside == n) return "";
  return h.source + ": only " + std::to_string(inside) + " of its " + std::to_string(n) +
         " samples fall inside the window [" + format_number(t0) + ", " + format_number(t1) +
         "] (its times run from " + format_number(h.times.front()) + " to " + format_number(h.times.back()) +
         "; are they in the model's time unit?)";
}

}  // namespace ordex
