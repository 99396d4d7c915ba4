#pragma once
// An expression of t for a weight entry, in the model files' expression language
// (model/expression.hpp: + - * / ^, comparisons, cond ? a : b, pi, the usual functions).
// Parsed once, evaluated many times; not thread-safe (it holds its variable).
#include <functional>
#include <memory>
#include <string>
#include <utility>
#include <vector>

namespace ordex {

/// Names an expression may use besides t: the model's parameters (constants) and its [define]
/// names and table columns (read at each t through VALUE).
struct ExpressionSymbols {
  std::vector<std::pair<std::string, double>> constants;
  std::vector<std::string> varying;
  /// The value of a name of VARYING at t; must outlive the expressions (it is copied).
  std::function<double(const std::string& name, double t)> value;
};

class TimeExpression {
 public:
  /// Parses TEXT; WHAT names it in messages ("weights.toml: Q[1][2]"). Throws InputError
  /// "WHAT: cannot read 'TEXT': reason" when it does not parse or uses a symbol other than t
  /// (and, with SYMBOLS, their names).
  TimeExpression(const std::string& text, const std::string& what, const ExpressionSymbols* symbols = nullptr);
  ~TimeExpression();
  TimeExpression(TimeExpression&&) noexcept;
  TimeExpression& operator=(TimeExpression&&) noexcept;

  /// The value at T. Throws InputError naming WHAT when the result is not finite.
  double operator()(double t) const;
  /// True when the text uses t or a varying symbol (false: the value is a constant).
  bool uses_t() const { return uses_t_; }
  const std::string& text() const { return text_; }

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
  std::string text_, what_;
  bool uses_t_ = false;
};

}  // namespace ordex
