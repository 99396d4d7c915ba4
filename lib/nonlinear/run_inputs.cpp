#include "nonlinear/run_inputs.hpp"

#include <toml++/toml.h>

#include <algorithm>
#include <cmath>

#include "io/csv.hpp"
#include "io/errors.hpp"
#include "io/input_file.hpp"
#include "model/spelling.hpp"

namespace ordex {

void GainSchedule::at(double t, MatrixRef K) const {
  if (t <= times.front()) {
    K = gains.front();
    return;
  }
  if (t >= times.back()) {
    K = gains.back();
    return;
  }
  const std::size_t k = static_cast<std::size_t>(std::upper_bound(times.begin(), times.end(), t) - times.begin()) - 1;
  const double s = (t - times[k]) / (times[k + 1] - times[k]);
  K = (1 - s) * gains[k] + s * gains[k + 1];
}

GainSchedule read_gain_schedule(const std::string& path, const SystemInfo& info) {
  const int n = static_cast<int>(info.state_names.size()), m = static_cast<int>(info.input_names.size());
  if (m == 0) throw InputError(path + ": a gain schedule needs a model with inputs");
  CsvTable csv = read_csv(path);
  std::vector<std::string> expected = matrix_column_names("K", m, n);
  expected.insert(expected.begin(), "t");
  if (csv.header != expected)
    throw InputError(path + ":" + std::to_string(csv.header_line) + ": the columns do not match the model: expected t,K_1_1,...,K_" +
                     std::to_string(m) + "_" + std::to_string(n) + " (" + std::to_string(m) + " inputs x " +
                     std::to_string(n) + " states, row-major), found " + std::to_string(csv.header.size()) + " columns");
  require_time_column(csv, 1);
  GainSchedule g;
  g.path = path;
  for (Eigen::Index r = 0; r < csv.values.rows(); ++r) {
    g.times.push_back(csv.values(r, 0));
    Eigen::MatrixXd K(m, n);
    for (int i = 0; i < m; ++i)
      for (int j = 0; j < n; ++j) K(i, j) = csv.values(r, 1 + i * n + j);
    g.gains.push_back(K);
  }
  return g;
}

namespace {

void read_laws(const toml::table& section, const std::string& name, const std::vector<std::string>& names,
               const std::string& what, const std::string& path, std::vector<Dispersion>& out) {
  std::vector<std::pair<int, std::string>> order;
  for (const auto& kv : section) order.push_back({static_cast<int>(kv.first.source().begin.line), std::string(kv.first.str())});
  std::sort(order.begin(), order.end());
  for (const auto& o : order) {
    const std::string key = name + "." + o.second;
    auto it = std::find(names.begin(), names.end(), o.second);
    if (it == names.end())
      throw InputError(path + ": " + key + ": the model has no " + what + " '" + o.second + "'" + did_you_mean(o.second, names));
    const toml::table* law = section.get(o.second)->as_table();
    if (!law || law->size() != 1)
      throw InputError(path + ": " + key + ": expected { sigma = S } (normal) or { half_width = H } (uniform)");
    Dispersion d;
    d.index = static_cast<int>(it - names.begin());
    const std::string kind(law->begin()->first.str());
    if (kind == "sigma") d.law = Dispersion::Law::normal;
    else if (kind == "half_width") d.law = Dispersion::Law::uniform;
    else throw InputError(path + ": " + key + "." + kind + ": unknown law (sigma for normal, half_width for uniform)");
    const toml::node& v = law->begin()->second;
    if (v.is_integer()) d.size = static_cast<double>(v.as_integer()->get());
    else if (v.is_floating_point()) d.size = v.as_floating_point()->get();
    else throw InputError(path + ": " + key + "." + kind + ": expected a number");
    if (!(d.size >= 0) || !std::isfinite(d.size))
      throw InputError(path + ": " + key + "." + kind + ": " + format_number(d.size) + " is not a finite number >= 0");
    out.push_back(d);
  }
}

}  // namespace

Dispersions read_dispersions(const std::string& path, const SystemInfo& info) {
  const std::string text = read_text_file(path, "dispersion file", input_limits().max_toml_bytes);
  toml::table root;
  try {
    root = toml::parse(text, path);
  } catch (const toml::parse_error& e) {
    throw InputError(path + ":" + std::to_string(e.source().begin.line) + ": TOML syntax error: " + std::string(e.description()));
  }
  Dispersions d;
  d.path = path;
  std::vector<std::string> parameter_names;
  for (const auto& p : info.parameters) parameter_names.push_back(p.first);
  for (const auto& kv : root) {
    const std::string key(kv.first.str());
    const toml::table* t = kv.second.as_table();
    if (key == "initial_state" && t) read_laws(*t, key, info.state_names, "state", path, d.states);
    else if (key == "parameters" && t) read_laws(*t, key, parameter_names, "parameter", path, d.parameters);
    else
      throw InputError(path + ": " + key + ": unknown section (expected [initial_state] and [parameters])" +
                       did_you_mean(key, {"initial_state", "parameters"}));
  }
  return d;
}

}  // namespace ordex
