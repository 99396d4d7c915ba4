#include "model/expression.hpp"

#include <muParser.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <limits>
#include <set>

#include "io/errors.hpp"
#include "model/spelling.hpp"

namespace ordex {
namespace {

constexpr double kPi = 3.14159265358979323846;

double fn_sin(double x) { return std::sin(x); }
double fn_cos(double x) { return std::cos(x); }
double fn_tan(double x) { return std::tan(x); }
double fn_asin(double x) { return std::asin(x); }
double fn_acos(double x) { return std::acos(x); }
double fn_atan(double x) { return std::atan(x); }
double fn_atan2(double y, double x) { return std::atan2(y, x); }
double fn_sinh(double x) { return std::sinh(x); }
double fn_cosh(double x) { return std::cosh(x); }
double fn_tanh(double x) { return std::tanh(x); }
double fn_exp(double x) { return std::exp(x); }
double fn_log(double x) { return std::log(x); }
double fn_log10(double x) { return std::log10(x); }
double fn_sqrt(double x) { return std::sqrt(x); }
double fn_abs(double x) { return std::fabs(x); }
double fn_floor(double x) { return std::floor(x); }
double fn_min(const double* v, int n) {
  double m = v[0];
  for (int i = 1; i < n; ++i) m = std::min(m, v[i]);
  return m;
}
double fn_max(const double* v, int n) {
  double m = v[0];
  for (int i = 1; i < n; ++i) m = std::max(m, v[i]);
  return m;
}
double fn_true_anomaly(double m, double ecc) { return true_anomaly(m, ecc); }

// Installs exactly the documented functions and constant (muparser's own extras, such as its
// underscore constants, are removed so that they neither work nor appear anywhere).
void install_functions(mu::Parser& p) {
  p.ClearFun();
  p.ClearConst();
  p.DefineFun("sin", fn_sin);
  p.DefineFun("cos", fn_cos);
  p.DefineFun("tan", fn_tan);
  p.DefineFun("asin", fn_asin);
  p.DefineFun("acos", fn_acos);
  p.DefineFun("atan", fn_atan);
  p.DefineFun("atan2", fn_atan2);
  p.DefineFun("sinh", fn_sinh);
  p.DefineFun("cosh", fn_cosh);
  p.DefineFun("tanh", fn_tanh);
  p.DefineFun("exp", fn_exp);
  p.DefineFun("log", fn_log);
  p.DefineFun("log10", fn_log10);
  p.DefineFun("sqrt", fn_sqrt);
  p.DefineFun("abs", fn_abs);
  p.DefineFun("min", fn_min);
  p.DefineFun("max", fn_max);
  p.DefineFun("floor", fn_floor);
  p.DefineFun("true_anomaly", fn_true_anomaly);
  p.DefineConst("pi", kPi);
}

bool is_ident_start(char c) { return std::isalpha(static_cast<unsigned char>(c)) || c == '_'; }
bool is_ident_char(char c) { return std::isalnum(static_cast<unsigned char>(c)) || c == '_'; }
bool is_digit(char c) { return std::isdigit(static_cast<unsigned char>(c)) != 0; }

bool is_function(const std::string& name) {
  const auto& f = function_names();
  return std::find(f.begin(), f.end(), name) != f.end();
}

// What the text uses, found before muparser sees it, so that every message speaks of the
// user's own names.
struct Scan {
  std::set<std::string> constants, variables;
};

Scan scan(const std::string& text, const SymbolScope& scope,
          const std::map<std::string, std::string>& unavailable, const std::string& where) {
  Scan out;
  const std::string quoted = quote_clipped(text);  // a huge expression is not echoed whole
  std::size_t i = 0, n = text.size();
  while (i < n) {
    char c = text[i];
    if (is_digit(c) || (c == '.' && i + 1 < n && is_digit(text[i + 1]))) {
      while (i < n && (is_digit(text[i]) || text[i] == '.')) ++i;
      if (i < n && (text[i] == 'e' || text[i] == 'E')) {
        std::size_t j = i + 1;
        if (j < n && (text[j] == '+' || text[j] == '-')) ++j;
        if (j < n && is_digit(text[j])) {
          i = j;
          while (i < n && is_digit(text[i])) ++i;
        }
      }
      if (i < n && is_ident_start(text[i]))
        throw InputError(where + ": a number is directly followed by a name in " + quoted +
                         " (write * for a product)");
      continue;
    }
    if (is_ident_start(c)) {
      std::size_t b = i;
      while (i < n && is_ident_char(text[i])) ++i;
      std::string name = text.substr(b, i - b);
      std::size_t k = i;
      while (k < n && std::isspace(static_cast<unsigned char>(text[k]))) ++k;
      bool call = k < n && text[k] == '(';
      if (call) {
        if (is_function(name)) continue;
        if (scope.has(name))
          throw InputError(where + ": " + quote_clipped(name) + " is not a function, in " + quoted);
        throw InputError(where + ": unknown function " + quote_clipped(name) + " in " + quoted +
                         did_you_mean(name, function_names()));
      }
      if (name == "pi") continue;
      if (is_function(name))
        throw InputError(where + ": " + quote_clipped(name) + " is a function: write " + name + "(...), in " +
                         quoted);
      if (scope.is_constant(name)) {
        out.constants.insert(name);
        continue;
      }
      if (scope.is_variable(name)) {
        out.variables.insert(name);
        continue;
      }
      auto u = unavailable.find(name);
      if (u != unavailable.end()) throw InputError(where + ": " + u->second + ", in " + quoted);
      std::vector<std::string> known = scope.names();
      known.push_back("pi");
      throw InputError(where + ": unknown symbol " + quote_clipped(name) + " in " + quoted + did_you_mean(name, known));
    }
    if (c == '=') {
      bool comparison = (i + 1 < n && text[i + 1] == '=') ||
                        (i > 0 && (text[i - 1] == '<' || text[i - 1] == '>' || text[i - 1] == '!'));
      if (!comparison)
        throw InputError(where + ": '=' is not allowed in " + quoted + " (write == to compare)");
      i += (i + 1 < n && text[i + 1] == '=') ? 2 : 1;
      continue;
    }
    if (c == '"' || c == '\'')
      throw InputError(where + ": quotes are not allowed inside the expression " + quoted);
    ++i;
  }
  return out;
}

std::string describe_parse_error(const mu::ParserError& e) {
  std::string msg = e.GetMsg();
  // muparser ends some messages with a period; ours are one clause inside a line.
  while (!msg.empty() && (msg.back() == '.' || msg.back() == ' ')) msg.pop_back();
  if (!msg.empty()) msg[0] = static_cast<char>(std::tolower(static_cast<unsigned char>(msg[0])));
  return msg;
}

}  // namespace

double true_anomaly(double mean_anomaly, double ecc) {
  if (!(ecc >= 0.0 && ecc < 1.0) || !std::isfinite(mean_anomaly))
    return std::numeric_limits<double>::quiet_NaN();
  const double two_pi = 2.0 * kPi;
  // Reduce to [-pi, pi]; f - M is 2 pi periodic and odd, so the turns are added back at the
  // end and the sign restored, which keeps f continuous and increasing in M.
  double turns = std::nearbyint(mean_anomaly / two_pi);
  double mr = mean_anomaly - turns * two_pi;
  double sign = mr < 0 ? -1.0 : 1.0;
  double m = std::min(std::fabs(mr), kPi);
  double e_anom = m;
  if (ecc > 0.0 && m > 0.0) {
    // g(E) = E - ecc sin E - m is increasing, g(0) <= 0 <= g(pi): keep a bracket and fall
    // back to bisection whenever a Newton step leaves it (this happens near ecc -> 1).
    double lo = 0.0, hi = kPi;
    e_anom = std::min(m + 0.85 * ecc, kPi);  // Danby's start, inside the bracket
    for (int iter = 0; iter < 100; ++iter) {
      double g = e_anom - ecc * std::sin(e_anom) - m;
      if (g == 0.0) break;
      if (g > 0) hi = e_anom;
      else lo = e_anom;
      double next = e_anom - g / (1.0 - ecc * std::cos(e_anom));
      if (!(next > lo && next < hi)) next = 0.5 * (lo + hi);
      double step = std::fabs(next - e_anom);
      e_anom = next;
      if (step <= 4.0 * std::numeric_limits<double>::epsilon() * std::max(1.0, e_anom)) break;
    }
  }
  double f = 2.0 * std::atan2(std::sqrt(1.0 + ecc) * std::sin(0.5 * e_anom),
                              std::sqrt(1.0 - ecc) * std::cos(0.5 * e_anom));
  return sign * f + turns * two_pi;
}

const std::vector<std::string>& function_names() {
  static const std::vector<std::string> names = {
      "sin",  "cos",  "tan",   "asin", "acos", "atan", "atan2", "sinh", "cosh",  "tanh",
      "exp",  "log",  "log10", "sqrt", "abs",  "min",  "max",   "floor", "true_anomaly"};
  return names;
}

std::string symbol_name_problem(const std::string& name) {
  if (name.empty()) return "an empty name";
  if (!is_ident_start(name[0]))
    return quote_clipped(name) + " does not start with a letter or '_'";
  for (char c : name)
    if (!is_ident_char(c)) return quote_clipped(name) + " may contain only letters, digits and '_'";
  if (name == "t") return "'t' is the independent variable";
  if (name == "pi") return "'pi' is a built-in constant";
  if (is_function(name)) return quote_clipped(name) + " is a function name";
  return "";
}

bool is_valid_symbol_name(const std::string& name) { return symbol_name_problem(name).empty(); }

void SymbolScope::add_constant(const std::string& name, double value) {
  variables_.erase(name);
  unavailable_.erase(name);
  constants_[name] = value;
}

void SymbolScope::add_variable(const std::string& name, double* slot) {
  constants_.erase(name);
  unavailable_.erase(name);
  variables_[name] = slot;
}

std::vector<std::string> SymbolScope::names() const {
  std::vector<std::string> out;
  for (const auto& c : constants_) out.push_back(c.first);
  for (const auto& v : variables_) out.push_back(v.first);
  std::sort(out.begin(), out.end());
  return out;
}

void SymbolScope::add_unavailable(const std::string& name, const std::string& note) {
  if (!has(name)) unavailable_[name] = note;
}

struct Expression::Impl {
  mu::Parser parser;
};

Expression::Expression(const std::string& text, const SymbolScope& scope, const std::string& where)
    : impl_(std::make_unique<Impl>()), text_(text) {
  bool blank = std::all_of(text.begin(), text.end(),
                           [](char c) { return std::isspace(static_cast<unsigned char>(c)) != 0; });
  if (blank) throw InputError(where + ": empty expression");
  Scan used = scan(text, scope, scope.unavailable_, where);
  mu::Parser& p = impl_->parser;
  try {
    install_functions(p);
    for (const std::string& c : used.constants) p.DefineConst(c, scope.constants_.at(c));
    for (const std::string& v : used.variables) {
      p.DefineVar(v, scope.variables_.at(v));
      variables_used_.push_back(v);
    }
    p.SetExpr(text);
    p.Eval();  // compiles to bytecode now, so that syntax errors surface at load
    if (p.GetNumResults() != 1)
      throw InputError(where + ": ',' outside a function call in " + quote_clipped(text));
  } catch (const mu::ParserError& e) {
    throw InputError(where + ": cannot parse " + quote_clipped(text) + ": " + describe_parse_error(e));
  }
}

Expression::~Expression() = default;
Expression::Expression(Expression&&) noexcept = default;
Expression& Expression::operator=(Expression&&) noexcept = default;

double Expression::eval() const { return impl_->parser.Eval(); }

}  // namespace ordex
