// Weight entries use the model layer's expression language (model/expression.hpp), with t as
// the only variable, so that weights and models read the same way.
#include "riccati/time_expression.hpp"

#include <cmath>

#include "io/errors.hpp"
#include "model/expression.hpp"

namespace ordex {

struct TimeExpression::Impl {
  double t = 0.0;  // the slot the expression reads; lives as long as the expression
  SymbolScope scope;
  std::unique_ptr<Expression> expr;
};

TimeExpression::TimeExpression(const std::string& text, const std::string& what)
    : impl_(std::make_unique<Impl>()), text_(text), what_(what) {
  impl_->scope.add_variable("t", &impl_->t);
  impl_->expr = std::make_unique<Expression>(text, impl_->scope, what);
  uses_t_ = !impl_->expr->is_constant();
}

TimeExpression::~TimeExpression() = default;
TimeExpression::TimeExpression(TimeExpression&&) noexcept = default;
TimeExpression& TimeExpression::operator=(TimeExpression&&) noexcept = default;

double TimeExpression::operator()(double t) const {
  impl_->t = t;
  const double v = impl_->expr->eval();
  if (!std::isfinite(v))
    throw InputError(what_ + ": '" + text_ + "' is not finite at t = " + format_number(t));
  return v;
}

}  // namespace ordex
