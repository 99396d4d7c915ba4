// Reading a model file (TOML) into a ModelSpec, then an ExpressionSystem. Every check names
// the file and the key ("PATH: KEY: what is wrong"), so that a typo never passes silently.
#include "model/model_file.hpp"

#include <toml++/toml.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <set>

#include "io/errors.hpp"
#include "io/input_file.hpp"
#include "model/expression.hpp"
#include "model/expression_system.hpp"
#include "model/spelling.hpp"
#include "model/time_table.hpp"

namespace ordex {
namespace {

std::string type_name(const toml::node& n) {
  if (n.is_table()) return "a table";
  if (n.is_array()) return "a list";
  if (n.is_string()) return "a string";
  if (n.is_integer() || n.is_floating_point()) return "a number";
  if (n.is_boolean()) return "a boolean";
  return "a date or time";
}

// Names of states, inputs and outputs become CSV column names and symbols of expressions:
// 't' is the time column of every CSV and the independent variable, and a name like a
// function or the constant pi would shadow it in expressions.
std::string reserved_name_problem(const std::string& name) {
  if (name == "t") return "'t' is the independent variable (and the time column of every CSV)";
  if (name == "pi") return "'pi' is a built-in constant";
  const std::vector<std::string>& functions = function_names();
  if (std::find(functions.begin(), functions.end(), name) != functions.end())
    return quote_clipped(name) + " is a function name";
  return "";
}

std::string join(const std::vector<std::string>& v) {
  std::string s;
  for (std::size_t i = 0; i < v.size(); ++i) s += (i ? ", " : "") + v[i];
  return s;
}


class ModelReader {
 public:
  explicit ModelReader(std::string path, std::vector<std::string> own_sections = {})
      : path_(std::move(path)), own_sections_(std::move(own_sections)) {}

  std::unique_ptr<System> load(const ParameterOverrides& overrides);
  /// Everything but [matrices] (and the sections of OWN_SECTIONS, left to the caller).
  ModelSpec read_parts(const ParameterOverrides& overrides) {
    read_common(overrides);
    return std::move(spec_);
  }

 private:
  std::string at(const std::string& key) const { return path_ + ": " + key; }
  [[noreturn]] void fail(const std::string& key, const std::string& what) const {
    throw InputError(at(key) + ": " + what);
  }

  void read_common(const ParameterOverrides& overrides);
  void parse_file();
  void check_keys(const toml::table& t, const std::string& prefix, const std::vector<std::string>& allowed);
  const toml::table* section(const std::string& name);
  std::vector<std::string> read_names(const toml::table& sys, const std::string& key, bool required);
  void read_system();
  void read_parameters(const ParameterOverrides& overrides);
  void read_defines();
  void read_tables();
  void read_table(const toml::node& node, const std::string& key);
  void read_matrices();
  MatrixSpec read_matrix(const toml::node& node, const std::string& name, int rows, int cols,
                         const std::string& rows_are, const std::string& cols_are);
  EntrySpec read_entry(const toml::node& node, const std::string& key);
  double constant_of(const toml::node& node, const std::string& key);
  void read_window();

  std::string path_;
  std::vector<std::string> own_sections_;  // read by a layer above: [matrices] is then refused
  toml::table root_;
  ModelSpec spec_;
  SymbolScope parameter_scope_;  // numbers and parameters: window, period, breakpoints
  // The parameters' values as variables of parameter_scope_ (sized once, so the addresses stay
  // put), so that a setting can tell which parameters it reads (ModelSpec::parameter_settings).
  std::vector<double> parameter_values_;
};

namespace {

/// The model file at PATH as TOML; a bounded read (a folder, a device or a huge file is refused
/// with the file named) and InputError "PATH:LINE:COLUMN: TOML syntax error: ..." otherwise.
toml::table parse_model_toml(const std::string& path) {
  const std::string text = read_text_file(path, "model file", input_limits().max_toml_bytes);
  try {
    return toml::parse(text, path);
  } catch (const toml::parse_error& e) {
    const auto& b = e.source().begin;
    throw InputError(path + ":" + std::to_string(b.line) + ":" + std::to_string(b.column) +
                     ": TOML syntax error: " + std::string(e.description()));
  }
}

}  // namespace

void ModelReader::parse_file() { root_ = parse_model_toml(path_); }

void ModelReader::check_keys(const toml::table& t, const std::string& prefix,
                             const std::vector<std::string>& allowed) {
  for (const auto& kv : t) {
    std::string key(kv.first.str());
    if (std::find(allowed.begin(), allowed.end(), key) == allowed.end())
      fail(prefix.empty() ? key : prefix + "." + key,
           "unknown key (line " + std::to_string(kv.first.source().begin.line) + "; expected " +
               (prefix.empty() ? "the tables [" + join(allowed) + "]" : join(allowed)) + ")" +
               did_you_mean(key, allowed));
  }
}

const toml::table* ModelReader::section(const std::string& name) {
  const toml::node* n = root_.get(name);
  if (!n) return nullptr;
  if (!n->is_table()) fail(name, "expected a table [" + name + "], found " + type_name(*n));
  return n->as_table();
}

std::vector<std::string> ModelReader::read_names(const toml::table& sys, const std::string& key,
                                                 bool required) {
  std::vector<std::string> names;
  const std::string full = "system." + key;
  const toml::node* n = sys.get(key);
  if (!n) {
    if (required) fail(full, "missing (a list of names such as [\"x\", \"v\"])");
    return names;
  }
  const toml::array* a = n->as_array();
  if (!a) fail(full, "expected a list of names, found " + type_name(*n));
  if (required && a->empty()) fail(full, "empty (at least one name is needed)");
  for (std::size_t i = 0; i < a->size(); ++i) {
    const std::string k = full + "[" + std::to_string(i + 1) + "]";
    const toml::node& item = *a->get(i);
    if (!item.is_string()) fail(k, "expected a name in quotes, found " + type_name(item));
    std::string s = item.as_string()->get();
    bool blank = std::all_of(s.begin(), s.end(), [](char c) { return std::isspace(static_cast<unsigned char>(c)) != 0; });
    if (blank) fail(k, "empty name");
    if (s.find_first_of(",\"\n\r") != std::string::npos)
      fail(k, quote_clipped(s) + " contains a comma, quote or line break (names become CSV column names)");
    const std::string reserved = reserved_name_problem(s);
    if (!reserved.empty()) fail(k, reserved + "; choose another name");
    names.push_back(s);
  }
  return names;
}

void ModelReader::read_system() {
  const toml::table* sys = section("system");
  if (!sys) fail("system", "missing: a model needs a [system] table with states = [...]");
  check_keys(*sys, "system", {"title", "states", "inputs", "outputs", "period", "breakpoints"});
  SystemInfo& info = spec_.info;
  info.source = path_;
  if (const toml::node* t = sys->get("title")) {
    if (!t->is_string()) fail("system.title", "expected text in quotes, found " + type_name(*t));
    info.title = t->as_string()->get();
  }
  info.state_names = read_names(*sys, "states", true);
  info.input_names = read_names(*sys, "inputs", false);
  info.output_names = read_names(*sys, "outputs", false);
  // Distinct names across the three lists: states and outputs share the CSV of a response.
  std::map<std::string, std::string> seen;
  auto check = [&](const std::vector<std::string>& v, const std::string& list, const std::string& what) {
    for (std::size_t i = 0; i < v.size(); ++i) {
      auto it = seen.find(v[i]);
      if (it != seen.end())
        fail("system." + list + "[" + std::to_string(i + 1) + "]",
             quote_clipped(v[i]) + " is already " + it->second +
                 " (names must be distinct: they are the columns of one CSV)");
      seen[v[i]] = "a" + what + " name";
    }
  };
  check(info.state_names, "states", " state");
  check(info.input_names, "inputs", "n input");
  check(info.output_names, "outputs", "n output");
}

void ModelReader::read_parameters(const ParameterOverrides& overrides) {
  std::vector<std::string> declared;
  if (const toml::table* p = section("parameters")) {
    std::vector<std::pair<int, std::string>> order;
    for (const auto& kv : *p) order.push_back({static_cast<int>(kv.first.source().begin.line), std::string(kv.first.str())});
    std::sort(order.begin(), order.end());
    for (const auto& o : order) {
      const std::string& name = o.second;
      const std::string key = "parameters." + name;
      std::string problem = symbol_name_problem(name);
      if (!problem.empty()) fail(key, problem);
      const toml::node& n = *p->get(name);
      double v;
      if (n.is_integer()) v = static_cast<double>(n.as_integer()->get());
      else if (n.is_floating_point()) v = n.as_floating_point()->get();
      else
        fail(key, "expected a number, found " + type_name(n) +
                      " (expressions belong in [define]; parameters are numbers)");
      if (!std::isfinite(v)) fail(key, "not a finite number");
      spec_.parameters.push_back({name, v});
      declared.push_back(name);
    }
  }
  for (const auto& ov : overrides) {
    auto it = std::find_if(spec_.parameters.begin(), spec_.parameters.end(),
                           [&](const auto& p) { return p.first == ov.first; });
    if (it == spec_.parameters.end())
      throw InputError(path_ + ": --set " + ov.first + ": the model has no parameter '" + ov.first +
                       "' (" + (declared.empty() ? std::string("it declares no [parameters]")
                                                 : "its parameters: " + join(declared)) + ")");
    if (!std::isfinite(ov.second))
      throw InputError(path_ + ": --set " + ov.first + ": the value is not finite");
    it->second = ov.second;
  }
  parameter_values_.resize(spec_.parameters.size());
  for (std::size_t i = 0; i < spec_.parameters.size(); ++i) {
    parameter_values_[i] = spec_.parameters[i].second;
    parameter_scope_.add_variable(spec_.parameters[i].first, &parameter_values_[i]);
  }
  parameter_scope_.add_unavailable("t", "'t' cannot be used here (only numbers and parameters)");
}

double ModelReader::constant_of(const toml::node& n, const std::string& key) {
  double v;
  if (n.is_integer()) v = static_cast<double>(n.as_integer()->get());
  else if (n.is_floating_point()) v = n.as_floating_point()->get();
  else if (n.is_string()) {
    const Expression e(n.as_string()->get(), parameter_scope_, at(key));
    v = e.eval();
    if (!e.variables_used().empty()) spec_.parameter_settings.push_back({key, e.variables_used()});
  }
  else fail(key, "expected a number or an expression string, found " + type_name(n));
  if (!std::isfinite(v)) fail(key, "evaluates to " + format_number(v));
  return v;
}

void ModelReader::read_defines() {
  const toml::table* d = section("define");
  if (!d) return;
  for (const auto& kv : *d) {
    std::string name(kv.first.str());
    DefineSpec ds;
    ds.name = name;
    ds.line = static_cast<int>(kv.first.source().begin.line);
    ds.column = static_cast<int>(kv.first.source().begin.column);
    std::string problem = symbol_name_problem(name);
    if (!problem.empty()) fail("define." + name, problem);
    ds.value = read_entry(kv.second, "define." + name);
    spec_.defines.push_back(std::move(ds));
  }
  // toml++ keeps keys sorted; the file order is what [define] means.
  std::sort(spec_.defines.begin(), spec_.defines.end(),
            [](const DefineSpec& a, const DefineSpec& b) {
              return a.line != b.line ? a.line < b.line : a.column < b.column;
            });
}

void ModelReader::read_table(const toml::node& node, const std::string& key) {
  if (!node.is_table()) fail(key, "expected a table, found " + type_name(node));
  const toml::table& t = *node.as_table();
  check_keys(t, key, {"file", "interpolation", "outside"});
  TableOptions opt;
  if (const toml::node* f = t.get("file")) {
    if (!f->is_string()) fail(key + ".file", "expected a file name in quotes, found " + type_name(*f));
    std::filesystem::path p(f->as_string()->get());
    if (p.is_relative() && !p.empty()) p = std::filesystem::path(path_).parent_path() / p;
    opt.file = p.empty() ? "" : p.lexically_normal().string();
  }
  if (const toml::node* i = t.get("interpolation")) {
    std::string s = i->is_string() ? i->as_string()->get() : "";
    if (s == "linear") opt.interpolation = Interpolation::linear;
    else if (s == "pchip") opt.interpolation = Interpolation::pchip;
    else fail(key + ".interpolation", "expected \"linear\" or \"pchip\"");
  }
  if (const toml::node* o = t.get("outside")) {
    std::string s = o->is_string() ? o->as_string()->get() : "";
    if (s == "error") opt.outside = OutsidePolicy::error;
    else if (s == "hold") opt.outside = OutsidePolicy::hold;
    else fail(key + ".outside", "expected \"error\" or \"hold\"");
  }
  opt.validate(at(key));
  TableSpec ts;
  ts.key = key;
  ts.table = std::make_shared<const TimeTable>(opt);
  spec_.tables.push_back(std::move(ts));
}

void ModelReader::read_tables() {
  const toml::node* n = root_.get("table");
  if (!n) return;
  if (const toml::array* a = n->as_array()) {
    for (std::size_t i = 0; i < a->size(); ++i)
      read_table(*a->get(i), "table[" + std::to_string(i + 1) + "]");
  } else {
    read_table(*n, "table");
  }
}

EntrySpec ModelReader::read_entry(const toml::node& n, const std::string& key) {
  EntrySpec e;
  e.key = key;
  if (n.is_integer()) {
    e.number = static_cast<double>(n.as_integer()->get());
  } else if (n.is_floating_point()) {
    e.number = n.as_floating_point()->get();
    if (!std::isfinite(e.number)) fail(key, "not a finite number");
  } else if (n.is_string()) {
    e.is_number = false;
    e.text = n.as_string()->get();
  } else {
    fail(key, "expected a number or an expression string, found " + type_name(n));
  }
  return e;
}

MatrixSpec ModelReader::read_matrix(const toml::node& node, const std::string& name, int rows,
                                    int cols, const std::string& rows_are, const std::string& cols_are) {
  const std::string key = "matrices." + name;
  MatrixSpec m;
  m.present = true;
  m.rows = rows;
  m.cols = cols;
  if (const toml::table* inline_table = node.as_table()) {
    // { table = "PREFIX" }: every entry is the table column PREFIX_i_j.
    check_keys(*inline_table, key, {"table"});
    const toml::node* p = inline_table->get("table");
    if (!p || !p->is_string()) fail(key, "expected { table = \"PREFIX\" } naming the columns PREFIX_i_j");
    std::string prefix = p->as_string()->get();
    std::set<std::string> columns;
    for (const TableSpec& ts : spec_.tables)
      for (const std::string& c : ts.table->columns()) columns.insert(c);
    if (spec_.tables.empty()) fail(key, "{ table = \"" + prefix + "\" } needs a [table] section");
    for (int i = 1; i <= rows; ++i)
      for (int j = 1; j <= cols; ++j) {
        std::string col = prefix + "_" + std::to_string(i) + "_" + std::to_string(j);
        if (!columns.count(col))
          fail(key, "{ table = \"" + prefix + "\" } needs a column '" + col + "', which no table has");
        EntrySpec e;
        e.is_number = false;
        e.text = col;
        e.key = key + "[" + std::to_string(i) + "][" + std::to_string(j) + "]";
        m.entries.push_back(e);
      }
    return m;
  }
  const toml::array* a = node.as_array();
  if (!a)
    fail(key, "expected a list of rows such as [[0, 1], [-1, 0]] or { table = \"" + name +
                  "\" }, found " + type_name(node));
  if (static_cast<int>(a->size()) != rows)
    fail(key, std::to_string(a->size()) + (a->size() == 1 ? " row, " : " rows, ") + rows_are);
  for (int i = 0; i < rows; ++i) {
    const std::string rkey = key + "[" + std::to_string(i + 1) + "]";
    const toml::node& row = *a->get(static_cast<std::size_t>(i));
    const toml::array* r = row.as_array();
    if (!r)
      fail(rkey, "expected a list of entries, found " + type_name(row) +
                     " (a matrix is a list of rows, e.g. [[1, 0]] for one row)");
    if (static_cast<int>(r->size()) != cols)
      fail(rkey, std::to_string(r->size()) + (r->size() == 1 ? " entry, " : " entries, ") + cols_are);
    for (int j = 0; j < cols; ++j)
      m.entries.push_back(read_entry(*r->get(static_cast<std::size_t>(j)),
                                     rkey + "[" + std::to_string(j + 1) + "]"));
  }
  return m;
}

void ModelReader::read_matrices() {
  const toml::table* mt = section("matrices");
  if (!mt) fail("matrices", "missing: a model needs a [matrices] table with A = [[...]]");
  check_keys(*mt, "matrices", {"A", "B", "C", "D"});
  const SystemInfo& info = spec_.info;
  const int n = static_cast<int>(info.state_names.size());
  const int m = static_cast<int>(info.input_names.size());
  const int p = static_cast<int>(info.output_names.size());
  auto count = [](int k, const std::string& list) {
    return "system." + list + " has " + std::to_string(k);
  };
  const std::string n_rows = count(n, "states");
  spec_.A.rows = spec_.A.cols = n;
  spec_.B.rows = n; spec_.B.cols = m;
  spec_.C.rows = p; spec_.C.cols = n;
  spec_.D.rows = p; spec_.D.cols = m;

  const toml::node* a = mt->get("A");
  if (!a) fail("matrices.A", "missing (the n x n state matrix is required)");
  spec_.A = read_matrix(*a, "A", n, n, n_rows, n_rows);

  const toml::node* b = mt->get("B");
  if (b && m == 0) fail("matrices.B", "the model has no inputs (declare system.inputs = [...])");
  if (!b && m > 0) fail("matrices.B", "missing (" + count(m, "inputs") + ")");
  if (b) spec_.B = read_matrix(*b, "B", n, m, n_rows, count(m, "inputs"));

  const toml::node* c = mt->get("C");
  if (c && p == 0) fail("matrices.C", "the model has no outputs (declare system.outputs = [...])");
  if (!c && p > 0) fail("matrices.C", "missing (" + count(p, "outputs") + ")");
  if (c) spec_.C = read_matrix(*c, "C", p, n, count(p, "outputs"), n_rows);

  const toml::node* d = mt->get("D");
  if (d && (m == 0 || p == 0))
    fail("matrices.D", std::string("needs both inputs and outputs; the model has no ") +
                           (m == 0 ? "inputs" : "outputs"));
  if (d) spec_.D = read_matrix(*d, "D", p, m, count(p, "outputs"), count(m, "inputs"));
}

void ModelReader::read_window() {
  SystemInfo& info = spec_.info;
  if (const toml::table* w = section("window")) {
    check_keys(*w, "window", {"from", "to"});
    const toml::node* f = w->get("from");
    const toml::node* t = w->get("to");
    if (!f) fail("window.from", "missing ([window] needs both from and to)");
    if (!t) fail("window.to", "missing ([window] needs both from and to)");
    double a = constant_of(*f, "window.from"), b = constant_of(*t, "window.to");
    if (a == b) fail("window", "from and to are equal (" + format_number(a) + ")");
    info.window = std::make_pair(a, b);
  } else if (!spec_.tables.empty()) {
    // The span every table covers is the natural default window of a tabulated model.
    double a = -INFINITY, b = INFINITY;
    for (const TableSpec& ts : spec_.tables) {
      a = std::max(a, ts.table->first_time());
      b = std::min(b, ts.table->last_time());
    }
    if (!(a < b)) fail("table", "the tables' time spans do not overlap");
    info.window = std::make_pair(a, b);
    info.window_from_tables = true;
  }
  for (const TableSpec& ts : spec_.tables)
    if (ts.table->options().outside == OutsidePolicy::error) {
      double a = ts.table->first_time(), b = ts.table->last_time();
      if (info.defined_span) {
        a = std::max(a, info.defined_span->first);
        b = std::min(b, info.defined_span->second);
      }
      info.defined_span = std::make_pair(a, b);
      info.defined_by += (info.defined_by.empty() ? "" : " and ") + ts.table->path();
    }
  if (info.window) {
    double lo = std::min(info.window->first, info.window->second);
    double hi = std::max(info.window->first, info.window->second);
    for (const TableSpec& ts : spec_.tables)
      if (ts.table->options().outside == OutsidePolicy::error &&
          (lo < ts.table->first_time() || hi > ts.table->last_time()))
        fail("window", "[" + format_number(info.window->first) + ", " + format_number(info.window->second) +
                           "] reaches outside the times of " + ts.table->path() + " [" +
                           format_number(ts.table->first_time()) + ", " +
                           format_number(ts.table->last_time()) + "] (" + ts.key + ".outside = \"error\")");
  }
}

void ModelReader::read_common(const ParameterOverrides& overrides) {
  spec_.path = path_;
  parse_file();
  std::vector<std::string> sections = {"system", "window", "parameters", "define", "table"};
  if (own_sections_.empty()) sections.push_back("matrices");
  sections.insert(sections.end(), own_sections_.begin(), own_sections_.end());
  check_keys(root_, "", sections);
  read_system();
  read_parameters(overrides);
  SystemInfo& info = spec_.info;
  info.parameters = spec_.parameters;  // the values in effect, for report headers
  const toml::table& sys = *root_.get("system")->as_table();
  if (const toml::node* p = sys.get("period")) {
    double v = constant_of(*p, "system.period");
    if (!(v > 0)) fail("system.period", format_number(v) + " is not positive");
    info.period = v;
  }
  if (const toml::node* bp = sys.get("breakpoints")) {
    const toml::array* a = bp->as_array();
    if (!a) fail("system.breakpoints", "expected a list of times, found " + type_name(*bp));
    for (std::size_t i = 0; i < a->size(); ++i)
      info.breakpoints.push_back(
          constant_of(*a->get(i), "system.breakpoints[" + std::to_string(i + 1) + "]"));
  }
  read_defines();
  read_tables();
  info.files_read.push_back(path_);
  for (const TableSpec& ts : spec_.tables) info.files_read.push_back(ts.table->path());
  if (own_sections_.empty()) read_matrices();
  read_window();
  for (const TableSpec& ts : spec_.tables)
    for (double t : ts.table->breakpoints()) info.breakpoints.push_back(t);
  std::sort(info.breakpoints.begin(), info.breakpoints.end());
  info.breakpoints.erase(std::unique(info.breakpoints.begin(), info.breakpoints.end()),
                         info.breakpoints.end());
}

std::unique_ptr<System> ModelReader::load(const ParameterOverrides& overrides) {
  read_common(overrides);
  const SystemInfo& info = spec_.info;

  // Entries such as 1/t or log(t) are finite only on some windows: without a [window] the
  // check waits for the window in force (System::require_defined_on, called by every job).
  const std::optional<double> t_check =
      info.window ? std::optional<double>(info.window->first) : std::nullopt;
  auto sys_out = std::make_unique<ExpressionSystem>(std::move(spec_));
  if (t_check) sys_out->check_finite_at(*t_check);
  else sys_out->check_constant_entries();
  return sys_out;
}

std::string trim(const std::string& s) {
  std::size_t b = s.find_first_not_of(" \t\r\n");
  if (b == std::string::npos) return "";
  std::size_t e = s.find_last_not_of(" \t\r\n");
  return s.substr(b, e - b + 1);
}

}  // namespace

std::unique_ptr<System> load_model(const std::string& path, const ParameterOverrides& overrides) {
  return ModelReader(path).load(overrides);
}

ModelSpec read_model_parts(const std::string& path, const ParameterOverrides& overrides,
                           const std::vector<std::string>& own_sections) {
  return ModelReader(path, own_sections).read_parts(overrides);
}

bool model_file_has_section(const std::string& path, const std::string& section) {
  // A file that is not valid TOML gets its syntax error here, whatever the caller would do next.
  return parse_model_toml(path).get(section) != nullptr;
}

std::pair<std::string, double> parse_override(const std::string& text) {
  std::size_t eq = text.find('=');
  if (eq == std::string::npos)
    throw InputError("--set '" + text + "': expected NAME=VALUE, for example --set q=0.4");
  std::string name = trim(text.substr(0, eq));
  std::string value = trim(text.substr(eq + 1));
  if (name.empty()) throw InputError("--set '" + text + "': the NAME before '=' is missing");
  std::string problem = symbol_name_problem(name);
  if (!problem.empty()) throw InputError("--set '" + text + "': " + problem);
  if (value.empty()) throw InputError("--set '" + text + "': the VALUE after '=' is missing");
  return {name, evaluate_constant(value, "--set " + name)};
}

double evaluate_constant(const std::string& text, const std::string& what) {
  SymbolScope scope;
  double v = Expression(text, scope, what).eval();
  if (!std::isfinite(v))
    throw InputError(what + ": '" + text + "' evaluates to " + format_number(v));
  return v;
}

}  // namespace ordex
