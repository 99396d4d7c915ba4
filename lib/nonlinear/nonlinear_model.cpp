// Reading [dynamics] and [nominal]; the sections every model shares come from the model
// reader (model/model_file.hpp read_model_parts), so --set, [define], [table] and [window]
// behave as in every other model file.
#include "nonlinear/nonlinear_model.hpp"

#include <toml++/toml.h>

#include <algorithm>
#include <filesystem>
#include <map>

#include "io/csv.hpp"
#include "io/errors.hpp"
#include "io/input_file.hpp"
#include "model/expression.hpp"
#include "model/expression_system.hpp"
#include "model/spelling.hpp"
#include "nonlinear/linearized_system.hpp"
#include "propagation/ode_integrator.hpp"

namespace ordex {
namespace {

class NonlinearReader {
 public:
  NonlinearReader(std::string path, const ParameterOverrides& overrides)
      : path_(std::move(path)), spec_(read_model_parts(path_, overrides, {"dynamics", "nominal"})) {
    const std::string text = read_text_file(path_, "model file", input_limits().max_toml_bytes);
    root_ = toml::parse(text, path_);  // already parsed once without error by read_model_parts
  }

  NonlinearModel load(const PropagationOptions& options);

 private:
  [[noreturn]] void fail(const std::string& key, const std::string& what) const {
    throw InputError(path_ + ": " + key + ": " + what);
  }
  const toml::table& section(const std::string& name, const std::vector<std::string>& keys);
  std::vector<SymbolicModel::Text> read_texts(const toml::table& t, const std::string& section,
                                              const std::string& key, std::size_t count, const std::string& count_of);
  std::string file_of(const toml::node& n, const std::string& key) const;
  void check_names();
  std::vector<int> columns_of(const TimeTable& table, const std::vector<std::string>& names, const std::string& key);

  std::string path_;
  ModelSpec spec_;
  toml::table root_;
};

const toml::table& NonlinearReader::section(const std::string& name, const std::vector<std::string>& keys) {
  const toml::node* n = root_.get(name);
  if (!n || !n->is_table()) fail(name, "missing: a nonlinear model needs a [" + name + "] table");
  const toml::table& t = *n->as_table();
  for (const auto& kv : t) {
    const std::string key(kv.first.str());
    if (std::find(keys.begin(), keys.end(), key) == keys.end())
      fail(name + "." + key, "unknown key (expected one of " + [&] {
        std::string s;
        for (const auto& k : keys) s += (s.empty() ? "" : ", ") + k;
        return s;
      }() + ")" + did_you_mean(key, keys));
  }
  return t;
}

std::vector<SymbolicModel::Text> NonlinearReader::read_texts(const toml::table& t, const std::string& section,
                                                             const std::string& key, std::size_t count,
                                                             const std::string& count_of) {
  const std::string full = section + "." + key;
  const toml::array* a = t.get(key) ? t.get(key)->as_array() : nullptr;
  if (!a) fail(full, "expected a list of expressions, one per " + count_of.substr(0, count_of.size() - 1));
  if (a->size() != count)
    fail(full, std::to_string(a->size()) + " expressions, the model has " + std::to_string(count) + " " + count_of +
                   " (one expression per " + count_of.substr(0, count_of.size() - 1) + ")");
  std::vector<SymbolicModel::Text> out;
  for (std::size_t i = 0; i < a->size(); ++i) {
    const toml::node& item = *a->get(i);
    const std::string k = full + "[" + std::to_string(i + 1) + "]";
    std::string text;
    if (item.is_string()) text = item.as_string()->get();
    else if (item.is_integer()) text = std::to_string(item.as_integer()->get());
    else if (item.is_floating_point()) text = format_number(item.as_floating_point()->get());
    else fail(k, "expected an expression in quotes or a number");
    out.push_back({"", k, text});
  }
  return out;
}

std::string NonlinearReader::file_of(const toml::node& n, const std::string& key) const {
  if (!n.is_string()) fail(key, "expected a file name in quotes");
  std::filesystem::path p(n.as_string()->get());
  if (p.is_relative()) p = std::filesystem::path(path_).parent_path() / p;
  return p.lexically_normal().string();
}

void NonlinearReader::check_names() {
  // One owner per name: every one is a symbol of f.
  std::map<std::string, std::string> owner;
  auto claim = [&](const std::string& name, const std::string& who) {
    auto it = owner.find(name);
    if (it != owner.end()) fail(who, "'" + name + "' is already " + it->second + " (every name is a symbol of f)");
    owner[name] = who;
  };
  const SystemInfo& info = spec_.info;
  for (std::size_t i = 0; i < info.state_names.size(); ++i) claim(info.state_names[i], "system.states[" + std::to_string(i + 1) + "]");
  for (std::size_t i = 0; i < info.input_names.size(); ++i) claim(info.input_names[i], "system.inputs[" + std::to_string(i + 1) + "]");
  for (const auto& p : spec_.parameters) claim(p.first, "parameters." + p.first);
  for (const TableSpec& ts : spec_.tables)
    for (const std::string& c : ts.table->columns()) claim(c, ts.key + " column '" + c + "'");
  for (const DefineSpec& d : spec_.defines) claim(d.name, d.value.key);
}

std::vector<int> NonlinearReader::columns_of(const TimeTable& table, const std::vector<std::string>& names,
                                             const std::string& key) {
  std::vector<int> out;
  for (const std::string& name : names) {
    auto it = std::find(table.columns().begin(), table.columns().end(), name);
    if (it == table.columns().end())
      fail(key, table.path() + " has no column '" + name + "' (it needs t and a column per name: " + [&] {
        std::string s;
        for (const auto& n : names) s += (s.empty() ? "" : ", ") + n;
        return s;
      }() + ")");
    out.push_back(static_cast<int>(it - table.columns().begin()));
  }
  return out;
}

NonlinearModel NonlinearReader::load(const PropagationOptions& options) {
  SystemInfo& info = spec_.info;
  const std::size_t n = info.state_names.size(), m = info.input_names.size(), p = info.output_names.size();
  check_names();

  SymbolicModel sm;
  sm.path = path_;
  sm.states = info.state_names;
  sm.inputs = info.input_names;
  for (const auto& par : spec_.parameters) sm.parameters.push_back(par.first);
  for (const TableSpec& ts : spec_.tables)
    for (const std::string& c : ts.table->columns()) sm.columns.push_back(c);
  for (const DefineSpec& d : spec_.defines)
    sm.defines.push_back({d.name, d.value.key, d.value.is_number ? format_number(d.value.number) : d.value.text});

  const toml::table& dyn = section("dynamics", {"f", "h"});
  sm.f = read_texts(dyn, "dynamics", "f", n, "states");
  if (dyn.get("h") || p > 0) {
    if (p == 0) fail("dynamics.h", "the model has no outputs (declare system.outputs = [...])");
    sm.h = read_texts(dyn, "dynamics", "h", p, "outputs");
  }

  auto def = std::make_shared<PlantDefinition>();
  def->path = path_;
  def->dynamics = differentiate(sm);
  for (const TableSpec& ts : spec_.tables) def->tables.push_back(ts.table);

  const toml::table& nom = section("nominal", {"x0", "u", "input", "trajectory", "interpolation"});
  NominalInputSpec& nin = def->nominal_input;
  Interpolation interpolation = Interpolation::linear;
  if (const toml::node* i = nom.get("interpolation")) {
    const std::string s = i->is_string() ? i->as_string()->get() : "";
    if (s == "pchip") interpolation = Interpolation::pchip;
    else if (s != "linear") fail("nominal.interpolation", "expected \"linear\" or \"pchip\"");
  }
  std::shared_ptr<const TimeTable> trajectory;
  if (const toml::node* tr = nom.get("trajectory")) {
    for (const char* k : {"x0", "u", "input"})
      if (nom.get(k)) fail(std::string("nominal.") + k, "not used with nominal.trajectory (the CSV gives the nominal)");
    TableOptions to;
    to.file = file_of(*tr, "nominal.trajectory");
    to.interpolation = interpolation;
    try {
      trajectory = std::make_shared<const TimeTable>(to);
    } catch (const InputError& e) {
      fail("nominal.trajectory", e.what());
    }
    info.files_read.push_back(to.file);
    if (m > 0) {
      nin.kind = NominalInputSpec::Kind::trajectory;
      nin.trajectory = trajectory;
      nin.trajectory_columns = columns_of(*trajectory, info.input_names, "nominal.trajectory");
    }
    if (!info.window) info.window = std::make_pair(trajectory->first_time(), trajectory->last_time());
    for (double b : trajectory->breakpoints()) info.breakpoints.push_back(b);
  } else {
    if (!nom.get("x0")) fail("nominal.x0", "missing: the nominal's initial state (or nominal.trajectory, a CSV)");
    if (nom.get("u") && nom.get("input")) fail("nominal.input", "give nominal.u or nominal.input, not both");
    if (m > 0 && !nom.get("u") && !nom.get("input"))
      fail("nominal.u", "missing: the nominal input, one expression of t per input (or nominal.input, a CSV)");
    if (m == 0 && (nom.get("u") || nom.get("input")))
      fail(nom.get("u") ? "nominal.u" : "nominal.input", "the model has no inputs");
    if (nom.get("u")) {
      nin.kind = NominalInputSpec::Kind::expressions;
      for (const auto& tx : read_texts(nom, "nominal", "u", m, "inputs")) {
        nin.texts.push_back(tx.text);
        nin.keys.push_back(tx.key);
      }
    } else if (const toml::node* in = nom.get("input")) {
      nin.kind = NominalInputSpec::Kind::samples;
      const std::string file = file_of(*in, "nominal.input");
      info.files_read.push_back(file);
      CsvTable csv;
      try {
        csv = read_csv(file);
        require_time_column(csv, 2);
      } catch (const InputError& e) {
        fail("nominal.input", e.what());
      }
      std::vector<int> cols;
      for (const std::string& name : info.input_names) {
        auto it = std::find(csv.header.begin(), csv.header.end(), name);
        if (it == csv.header.end())
          fail("nominal.input", file + " has no column '" + name + "' (it needs t and one column per input)");
        cols.push_back(static_cast<int>(it - csv.header.begin()));
      }
      nin.samples.times.assign(csv.values.col(0).data(), csv.values.col(0).data() + csv.values.rows());
      nin.samples.values.resize(csv.values.rows(), static_cast<Eigen::Index>(m));
      for (std::size_t j = 0; j < m; ++j) nin.samples.values.col(static_cast<Eigen::Index>(j)) = csv.values.col(cols[j]);
      nin.samples.interpolation = SampleInterpolation::Linear;
      if (info.window) {
        const double lo = std::min(info.window->first, info.window->second), hi = std::max(info.window->first, info.window->second);
        if (lo < nin.samples.times.front() || hi > nin.samples.times.back())
          fail("nominal.input", file + " covers [" + format_number(nin.samples.times.front()) + ", " +
                                    format_number(nin.samples.times.back()) + "], not the window [" +
                                    format_number(info.window->first) + ", " + format_number(info.window->second) + "]");
      }
      for (double t : nin.samples.times) info.breakpoints.push_back(t);
    }
  }
  if (!info.window) fail("window", "missing: a nonlinear model needs a [window] (the span of its nominal)");
  const double t0 = info.window->first, t1 = info.window->second;
  if (!(t1 > t0)) fail("window", "must run forward (to > from) for the nominal to be integrated");
  if (trajectory && (t0 < trajectory->first_time() || t1 > trajectory->last_time()))
    fail("nominal.trajectory", trajectory->path() + " covers [" + format_number(trajectory->first_time()) + ", " +
                                   format_number(trajectory->last_time()) + "], not the window [" +
                                   format_number(t0) + ", " + format_number(t1) + "]");
  std::sort(info.breakpoints.begin(), info.breakpoints.end());
  info.breakpoints.erase(std::unique(info.breakpoints.begin(), info.breakpoints.end()), info.breakpoints.end());
  info.parameters = spec_.parameters;
  info.defined_span = std::make_pair(t0, t1);
  info.defined_by = "the nominal trajectory";
  def->info = info;

  NonlinearModel model;
  model.plant = def;
  PlantEvaluator plant(def);
  if (trajectory) {
    model.nominal = NominalStates::from_table(trajectory, columns_of(*trajectory, info.state_names, "nominal.trajectory"));
    model.nominal_x0.resize(static_cast<Eigen::Index>(n));
    model.nominal->state(t0, model.nominal_x0.data());
  } else {
    const toml::array* a = nom.get("x0")->as_array();
    if (!a || a->size() != n)
      fail("nominal.x0", "expected a list of " + std::to_string(n) + " numbers or expressions (one per state)");
    // The parameters are variables here only to learn which ones x0 uses (a sweep must know).
    std::vector<double> values;
    for (const auto& par : spec_.parameters) values.push_back(par.second);
    SymbolScope constants;
    for (std::size_t j = 0; j < values.size(); ++j) constants.add_variable(spec_.parameters[j].first, &values[j]);
    model.nominal_x0.resize(static_cast<Eigen::Index>(n));
    for (std::size_t i = 0; i < n; ++i) {
      const toml::node& item = *a->get(i);
      const std::string k = "nominal.x0[" + std::to_string(i + 1) + "]";
      double v;
      if (item.is_integer()) v = static_cast<double>(item.as_integer()->get());
      else if (item.is_floating_point()) v = item.as_floating_point()->get();
      else if (item.is_string()) {
        const Expression e(item.as_string()->get(), constants, path_ + ": " + k);
        v = e.eval();
        for (const std::string& used : e.variables_used())
          if (std::find(model.nominal_x0_parameters.begin(), model.nominal_x0_parameters.end(), used) ==
              model.nominal_x0_parameters.end())
            model.nominal_x0_parameters.push_back(used);
      }
      else fail(k, "expected a number or an expression of the parameters");
      if (!std::isfinite(v)) fail(k, "not finite");
      model.nominal_x0(static_cast<Eigen::Index>(i)) = v;
    }
    model.nominal_integrated = true;
    model.nominal = NominalStates::integrate(plant, model.nominal_x0, t0, t1, ode_options(options, OdeScheme::Adams),
                                             info.breakpoints);
  }
  return model;
}

}  // namespace

std::unique_ptr<System> NonlinearModel::linearization() const {
  SystemInfo info = plant->info;
  const std::string what = "linearized about its nominal (exact Jacobians)";
  info.title = info.title.empty() ? what : info.title + ", " + what;
  auto sys = std::make_unique<LinearizedSystem>(evaluator(), nominal, info);
  return sys;
}

bool is_nonlinear_model_file(const std::string& path) { return model_file_has_section(path, "dynamics"); }

NonlinearModel load_nonlinear_model(const std::string& path, const ParameterOverrides& overrides,
                                    const PropagationOptions& options) {
  return NonlinearReader(path, overrides).load(options);
}

std::unique_ptr<System> load_linearized_model(const std::string& path, const ParameterOverrides& overrides,
                                              const PropagationOptions& options) {
  return load_nonlinear_model(path, overrides, options).linearization();
}

}  // namespace ordex
