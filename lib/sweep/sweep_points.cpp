#include "sweep/sweep_points.hpp"

#include <algorithm>
#include <cmath>
#include <toml++/toml.h>

#include "io/errors.hpp"
#include "io/input_file.hpp"
#include "model/model_file.hpp"
#include "model/expression.hpp"

namespace ordex {

namespace {

std::string trimmed(const std::string& s) {
  const std::size_t b = s.find_first_not_of(" \t");
  if (b == std::string::npos) return "";
  return s.substr(b, s.find_last_not_of(" \t") - b + 1);
}

std::uint64_t splitmix64(std::uint64_t x) {
  x += 0x9E3779B97F4A7C15ULL;
  x = (x ^ (x >> 30)) * 0xBF58476D1CE4E5B9ULL;
  x = (x ^ (x >> 27)) * 0x94D049BB133111EBULL;
  return x ^ (x >> 31);
}

}  // namespace

double counter_uniform(std::uint64_t seed, std::uint64_t k, std::uint64_t stream) {
  const std::uint64_t z = splitmix64(splitmix64(splitmix64(seed) ^ k) ^ (stream * 0xD1B54A32D192ED03ULL + 1));
  return (static_cast<double>(z >> 11) + 0.5) * 0x1.0p-53;  // 53 random bits, never 0 or 1
}

GridAxis parse_grid_axis(const std::string& text) {
  const std::string where = "SweepOptions::grid " + quote_clipped(text);
  const std::size_t eq = text.find('=');
  if (eq == std::string::npos) throw InputError(where + ": expected NAME=FROM:TO:COUNT, for example q=0:1:11");
  GridAxis axis;
  axis.name = trimmed(text.substr(0, eq));
  const std::string problem = symbol_name_problem(axis.name);
  if (axis.name.empty()) throw InputError(where + ": the NAME before '=' is missing");
  if (!problem.empty()) throw InputError(where + ": " + problem);
  const std::string rest = text.substr(eq + 1);
  // Split on the last two colons (FROM may itself contain a ?: expression).
  const std::size_t c2 = rest.rfind(':');
  const std::size_t c1 = c2 == std::string::npos || c2 == 0 ? std::string::npos : rest.rfind(':', c2 - 1);
  if (c1 == std::string::npos) throw InputError(where + ": expected NAME=FROM:TO:COUNT, for example q=0:1:11");
  axis.from = evaluate_constant(trimmed(rest.substr(0, c1)), where + ": FROM");
  axis.to = evaluate_constant(trimmed(rest.substr(c1 + 1, c2 - c1 - 1)), where + ": TO");
  const std::string count = trimmed(rest.substr(c2 + 1));
  std::size_t used = 0;
  long n = 0;
  try {
    n = std::stol(count, &used);
  } catch (const std::exception&) {
    used = 0;
  }
  if (count.empty() || used != count.size()) throw InputError(where + ": COUNT '" + count + "' is not a whole number");
  if (n < 1) throw InputError(where + ": COUNT " + count + " is not at least 1");
  if (static_cast<std::size_t>(n) > kMaxSweepPoints) throw InputError(where + ": COUNT " + count + " is too large");
  if (n == 1 && axis.from != axis.to) throw InputError(where + ": COUNT 1 needs FROM equal to TO");
  axis.count = n;
  return axis;
}

std::vector<SampleDistribution> read_sample_plan(const std::string& path) {
  const std::string text = read_text_file(path, "sample plan", input_limits().max_toml_bytes);
  toml::table root;
  try {
    root = toml::parse(text, path);
  } catch (const toml::parse_error& e) {
    const auto& b = e.source().begin;
    throw InputError(path + ":" + std::to_string(b.line) + ":" + std::to_string(b.column) +
                     ": TOML syntax error: " + std::string(e.description()));
  }
  std::vector<std::pair<int, std::string>> order;
  for (const auto& kv : root) order.push_back({static_cast<int>(kv.first.source().begin.line), std::string(kv.first.str())});
  std::sort(order.begin(), order.end());
  std::vector<SampleDistribution> plan;
  for (const auto& entry : order) {
    // A plain variable, not a structured binding: C++17 lambdas cannot capture those (clang).
    const std::string& name = entry.second;
    const toml::table* t = root.get(name)->as_table();
    if (!t) throw InputError(path + ": " + name + ": expected a table [" + name + "] with distribution = \"normal\" or \"uniform\"");
    auto number = [&](const char* key) {
      const toml::node* n = t->get(key);
      if (!n) throw InputError(path + ": " + name + "." + key + ": missing");
      double v;
      if (n->is_integer()) v = static_cast<double>(n->as_integer()->get());
      else if (n->is_floating_point()) v = n->as_floating_point()->get();
      else if (n->is_string()) v = evaluate_constant(n->as_string()->get(), path + ": " + name + "." + key);
      else throw InputError(path + ": " + name + "." + key + ": expected a number");
      if (!std::isfinite(v)) throw InputError(path + ": " + name + "." + key + ": not a finite number");
      return v;
    };
    SampleDistribution d;
    d.name = name;
    const toml::node* kind = t->get("distribution");
    const std::string k = kind && kind->is_string() ? kind->as_string()->get() : "";
    std::vector<std::string> allowed;
    if (k == "normal") {
      d.kind = SampleDistribution::Kind::Normal;
      d.a = number("mean");
      d.b = number("sd");
      if (d.b < 0) throw InputError(path + ": " + name + ".sd: " + format_number(d.b) + " is negative");
      allowed = {"distribution", "mean", "sd"};
    } else if (k == "uniform") {
      d.kind = SampleDistribution::Kind::Uniform;
      d.a = number("low");
      d.b = number("high");
      if (d.b < d.a) throw InputError(path + ": " + name + ".high: " + format_number(d.b) + " is below low");
      allowed = {"distribution", "low", "high"};
    } else {
      throw InputError(path + ": " + name + ".distribution: expected \"normal\" (mean, sd) or \"uniform\" (low, high)" +
                       (kind ? std::string(", found ") + (k.empty() ? "a non-string" : "'" + k + "'") : std::string(", missing")));
    }
    for (const auto& kv : *t)
      if (std::find(allowed.begin(), allowed.end(), std::string(kv.first.str())) == allowed.end())
        throw InputError(path + ": " + name + "." + std::string(kv.first.str()) + ": unknown key for a " + k + " distribution");
    plan.push_back(d);
  }
  if (plan.empty()) throw InputError(path + ": no parameter: expected one table per parameter, e.g. [q] distribution = \"uniform\"");
  return plan;
}

SweepPoints SweepPoints::grid(std::vector<GridAxis> axes) {
  if (axes.empty()) throw InputError("SweepOptions::grid: no axis given");
  SweepPoints p;
  double total = 1;
  for (const GridAxis& a : axes) {
    if (std::find(p.names_.begin(), p.names_.end(), a.name) != p.names_.end())
      throw InputError("SweepOptions::grid: parameter '" + a.name + "' is given twice");
    p.names_.push_back(a.name);
    total *= static_cast<double>(a.count);
  }
  if (total > static_cast<double>(kMaxSweepPoints))
    throw InputError("SweepOptions::grid: " + format_number(total) + " points, more than " + std::to_string(kMaxSweepPoints));
  p.size_ = static_cast<std::size_t>(total);
  p.axes_ = std::move(axes);
  return p;
}

SweepPoints SweepPoints::samples(std::vector<SampleDistribution> plan, std::size_t runs, std::uint64_t seed) {
  if (runs < 1 || runs > kMaxSweepPoints)
    throw InputError("SweepOptions::runs = " + std::to_string(runs) + " is outside [1, " + std::to_string(kMaxSweepPoints) + "]");
  SweepPoints p;
  for (const SampleDistribution& d : plan) {
    if (std::find(p.names_.begin(), p.names_.end(), d.name) != p.names_.end())
      throw InputError("SweepOptions::sample: parameter '" + d.name + "' is given twice");
    p.names_.push_back(d.name);
  }
  p.size_ = runs;
  p.plan_ = std::move(plan);
  p.seed_ = seed;
  return p;
}

std::vector<double> SweepPoints::values(std::size_t k) const {
  std::vector<double> v(names_.size());
  if (!axes_.empty()) {
    std::size_t rest = k;
    for (std::size_t j = axes_.size(); j-- > 0;) {
      const GridAxis& a = axes_[j];
      const std::size_t i = rest % static_cast<std::size_t>(a.count);
      rest /= static_cast<std::size_t>(a.count);
      // The ends exactly; inside, from + (to - from) i / (count - 1).
      v[j] = a.count == 1 ? a.from
             : i + 1 == static_cast<std::size_t>(a.count)
                 ? a.to
                 : a.from + (a.to - a.from) * static_cast<double>(i) / static_cast<double>(a.count - 1);
    }
    return v;
  }
  for (std::size_t j = 0; j < plan_.size(); ++j) {
    const SampleDistribution& d = plan_[j];
    const double u1 = counter_uniform(seed_, k, 2 * j), u2 = counter_uniform(seed_, k, 2 * j + 1);
    if (d.kind == SampleDistribution::Kind::Uniform) {
      v[j] = d.a + (d.b - d.a) * u1;
    } else {  // Box-Muller: a standard normal deviate from two uniforms
      const double pi = 3.14159265358979323846;
      v[j] = d.a + d.b * std::sqrt(-2.0 * std::log(u1)) * std::cos(2.0 * pi * u2);
    }
  }
  return v;
}

}  // namespace ordex
