// Weight entries use the model layer's expression language (model/expression.hpp), with t as
// the only variable, so that weights and models read the same way.
#include "riccati/time_expression.hpp"

#include <cmath>
#include <functional>

#include "io/errors.hpp"
#include "model/expression.hpp"

namespace ordex {

struct TimeExpression::Impl {
  double t = 0.0;  // the slot the expression reads; lives as long as the expression
  std::vector<double> slots;  // one per varying symbol (sized before any address is taken)
  std::vector<std::pair<std::string, double*>> used;  // the varying symbols the text reads
  std::function<double(const std::string&, double)> value;
  SymbolScope scope;
  std::unique_ptr<Expression> expr;
};

TimeExpression::TimeExpression(const std::string& text, const std::string& what, const ExpressionSymbols* symbols)
    : impl_(std::make_unique<Impl>()), text_(text), what_(what) {
  impl_->scope.add_variable("t", &impl_->t);
  if (symbols) {
    for (const auto& [name, v] : symbols->constants) impl_->scope.add_constant(name, v);
    impl_->slots.assign(symbols->varying.size(), 0.0);
    for (std::size_t i = 0; i < symbols->varying.size(); ++i)
      impl_->scope.add_variable(symbols->varying[i], &impl_->slots[i]);
    impl_->value = symbols->value;
  }
  impl_->expr = std::make_unique<Expression>(text, impl_->scope, what);
  if (symbols)
    for (const std::string& name : impl_->expr->variables_used())
      for (std::size_t i = 0; i < symbols->varying.size(); ++i)
        if (symbols->varying[i] == name) impl_->used.emplace_back(name, &impl_->slots[i]);
  uses_t_ = !impl_->expr->is_constant();
}

TimeExpression::~TimeExpression() = default;
TimeExpression::TimeExpression(TimeExpression&&) noexcept = default;
TimeExpression& TimeExpression::operator=(TimeExpression&&) noexcept = default;

double TimeExpression::operator()(double t) const {
  impl_->t = t;
  for (auto& [name, slot] : impl_->used) *slot = impl_->value(name, t);
  const double v = impl_->expr->eval();
  if (!std::isfinite(v))
    throw InputError(what_ + ": '" + text_ + "' is not finite at t = " + format_number(t));
  return v;
}

}  // namespace ordex
