#pragma once
// An expression of t for a weight entry, in the model files' expression language
// (model/expression.hpp: + - * / ^, comparisons, cond ? a : b, pi, the usual functions).
// Parsed once, evaluated many times; not thread-safe (it holds its variable).
#include <memory>
#include <string>

namespace ordex {

class TimeExpression {
 public:
  /// Parses TEXT; WHAT names it in messages ("weights.toml: Q[1][2]"). Throws InputError
  /// "WHAT: cannot read 'TEXT': reason" when it does not parse or uses a symbol other than t.
  TimeExpression(const std::string& text, const std::string& what);
  ~TimeExpression();
  TimeExpression(TimeExpression&&) noexcept;
  TimeExpression& operator=(TimeExpression&&) noexcept;

  /// The value at T. Throws InputError naming WHAT when the result is not finite.
  double operator()(double t) const;
  /// True when the text does not use t (the value is then a constant).
  bool uses_t() const { return uses_t_; }
  const std::string& text() const { return text_; }

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
  std::string text_, what_;
  bool uses_t_ = false;
};

}  // namespace ordex
