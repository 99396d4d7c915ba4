#pragma once
// Expressions of model files (CONTRACT.md "Model file"): ordinary math in t, parameters and
// named definitions, parsed once and evaluated many times without allocating.
//
//   SymbolScope scope;
//   double t = 0;
//   scope.add_variable("t", &t);
//   scope.add_constant("omega", 2.0);
//   Expression e("-omega^2*cos(t)", scope, "m.toml: matrices.A[2][1]");
//   t = 0.3;
//   double v = e.eval();
//
// Syntax: + - * / ^ (right-associative, -2^2 = -4), parentheses, comparisons < <= > >= == !=,
// && and ||, cond ? a : b, the constant pi, and the functions listed by function_names().
// Constants are folded at parse time; variables are read through the address given to the
// scope, so the scope's slots must outlive every Expression parsed against it.
#include <map>
#include <memory>
#include <string>
#include <vector>

namespace ordex {

/// The true anomaly f (radians) for mean anomaly M and eccentricity 0 <= ecc < 1: solves
/// Kepler's equation E - ecc sin E = M by safeguarded Newton iteration, then
/// f = 2 atan2(sqrt(1+ecc) sin(E/2), sqrt(1-ecc) cos(E/2)). Continuous and increasing in M:
/// f - M is 2 pi periodic, so f passes 2 pi when M does instead of wrapping. Returns NaN for
/// ecc outside [0, 1) or a non-finite M (the model layer reports it with the key).
double true_anomaly(double mean_anomaly, double ecc);

/// The functions expressions may call, in the order documented in docs/models.md.
const std::vector<std::string>& function_names();

/// The names an expression may use and what each is bound to.
class SymbolScope {
 public:
  /// NAME reads the fixed VALUE (folded into the expression at parse time).
  void add_constant(const std::string& name, double value);
  /// NAME reads *SLOT at every evaluation; SLOT must outlive the expressions.
  void add_variable(const std::string& name, double* slot);
  /// NAME exists but may not be used yet (a later [define] entry); NOTE says why, e.g.
  /// "'k' is defined later (define.k, line 12); [define] entries may use only earlier ones".
  void add_unavailable(const std::string& name, const std::string& note);

  bool is_constant(const std::string& name) const { return constants_.count(name) > 0; }
  bool is_variable(const std::string& name) const { return variables_.count(name) > 0; }
  /// True for constants and variables (not functions, not unavailable names).
  bool has(const std::string& name) const { return is_constant(name) || is_variable(name); }
  /// Every constant and variable name, sorted (for "did you mean" hints).
  std::vector<std::string> names() const;

 private:
  friend class Expression;
  std::map<std::string, double> constants_;
  std::map<std::string, double*> variables_;
  std::map<std::string, std::string> unavailable_;
};

/// One parsed expression. Not copyable (its parser holds variable addresses); movable.
class Expression {
 public:
  /// Parses TEXT against SCOPE. WHERE ("PATH: KEY") starts every message. Throws InputError
  /// for an unknown symbol or function, a function used without arguments, an assignment,
  /// several comma-separated results, or any syntax error.
  Expression(const std::string& text, const SymbolScope& scope, const std::string& where);
  ~Expression();
  Expression(Expression&&) noexcept;
  Expression& operator=(Expression&&) noexcept;
  Expression(const Expression&) = delete;
  Expression& operator=(const Expression&) = delete;

  /// The value with the variables' current contents. Allocates nothing.
  double eval() const;
  /// True when the expression reads no variable (its value never changes).
  bool is_constant() const { return variables_used_.empty(); }
  /// Names of the scope's variables it reads, sorted.
  const std::vector<std::string>& variables_used() const { return variables_used_; }
  const std::string& text() const { return text_; }

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
  std::string text_;
  std::vector<std::string> variables_used_;
};

/// True for a name usable as a parameter, definition or table column: a letter or '_' first,
/// then letters, digits and '_', and not t, pi or a function name.
bool is_valid_symbol_name(const std::string& name);
/// Why NAME is not valid (empty when it is), e.g. "'sin' is a function name".
std::string symbol_name_problem(const std::string& name);

}  // namespace ordex
