#include "nonlinear/plant_evaluator.hpp"

#include <cstring>
#include <limits>

#include "io/errors.hpp"
#include "model/expression.hpp"

namespace ordex {

struct PlantEvaluator::Compiled {
  // Slots: [0] t, then states, inputs, parameters, table columns. Allocated once: the parsed
  // expressions hold these addresses.
  std::vector<double> slots;
  double *t, *x, *u, *p, *col, *def;
  SymbolScope scope, nominal_scope;
  struct Entry {
    int row, col;
    Expression expr;
  };
  std::vector<Expression> f, h, u_nominal, defines;
  std::vector<Entry> dfdx, dfdu, dhdx, dhdu;
  std::vector<int> column_offset;  // first column slot of each table
  double table_time = std::numeric_limits<double>::quiet_NaN();
};

PlantEvaluator::PlantEvaluator(std::shared_ptr<const PlantDefinition> def)
    : def_(std::move(def)), c_(std::make_unique<Compiled>()) {
  const PlantDefinition& d = *def_;
  n_ = static_cast<int>(d.info.state_names.size());
  m_ = static_cast<int>(d.info.input_names.size());
  p_ = static_cast<int>(d.info.output_names.size());
  const int k = static_cast<int>(d.info.parameters.size());
  int columns = 0;
  Compiled& c = *c_;
  for (const auto& tab : d.tables) {
    c.column_offset.push_back(columns);
    columns += static_cast<int>(tab->columns().size());
  }
  const int defines = static_cast<int>(d.dynamics.time_defines.size());
  c.slots.assign(static_cast<std::size_t>(1 + n_ + m_ + k + columns + defines), 0.0);
  c.t = c.slots.data();
  c.x = c.t + 1;
  c.u = c.x + n_;
  c.p = c.u + m_;
  c.col = c.p + k;
  c.def = c.col + columns;
  c.scope.add_variable("t", c.t);
  c.nominal_scope.add_variable("t", c.t);
  for (int i = 0; i < n_; ++i) c.scope.add_variable(d.info.state_names[i], c.x + i);
  for (int i = 0; i < m_; ++i) c.scope.add_variable(d.info.input_names[i], c.u + i);
  for (int i = 0; i < k; ++i) {
    c.p[i] = d.info.parameters[i].second;
    c.scope.add_variable(d.info.parameters[i].first, c.p + i);
    c.nominal_scope.add_constant(d.info.parameters[i].first, c.p[i]);
  }
  for (std::size_t ti = 0; ti < d.tables.size(); ++ti)
    for (std::size_t j = 0; j < d.tables[ti]->columns().size(); ++j) {
      double* slot = c.col + c.column_offset[ti] + static_cast<int>(j);
      c.scope.add_variable(d.tables[ti]->columns()[j], slot);
      c.nominal_scope.add_variable(d.tables[ti]->columns()[j], slot);
    }
  const std::string at = d.path + ": ";
  // Time-only [define] entries: the dynamics see their values; the nominal input sees them
  // computed with the file's parameters only when it does not use them (a design choice kept
  // simple: u_n may use t, parameters and table columns).
  for (int i = 0; i < defines; ++i) {
    const auto& e = d.dynamics.time_defines[static_cast<std::size_t>(i)];
    c.defines.emplace_back(e.text, c.scope, at + "define." + e.key);
    c.scope.add_variable(e.key, c.def + i);
  }
  for (const auto& e : d.dynamics.f) c.f.emplace_back(e.text, c.scope, at + e.key);
  for (const auto& e : d.dynamics.h) c.h.emplace_back(e.text, c.scope, at + e.key);
  auto entries = [&](const std::vector<SymbolicDynamics::Entry>& from, std::vector<Compiled::Entry>& to) {
    for (const auto& e : from) to.push_back({e.row, e.col, Expression(e.text, c.scope, at + e.key)});
  };
  entries(d.dynamics.dfdx, c.dfdx);
  entries(d.dynamics.dfdu, c.dfdu);
  entries(d.dynamics.dhdx, c.dhdx);
  entries(d.dynamics.dhdu, c.dhdu);
  if (d.nominal_input.kind == NominalInputSpec::Kind::expressions)
    for (std::size_t i = 0; i < d.nominal_input.texts.size(); ++i)
      c.u_nominal.emplace_back(d.nominal_input.texts[i], c.nominal_scope, at + d.nominal_input.keys[i]);
}

PlantEvaluator::~PlantEvaluator() = default;

std::unique_ptr<PlantEvaluator> PlantEvaluator::clone() const {
  auto copy = std::make_unique<PlantEvaluator>(def_);
  const int k = static_cast<int>(def_->info.parameters.size());
  for (int i = 0; i < k; ++i) copy->c_->p[i] = c_->p[i];
  return copy;
}

void PlantEvaluator::set_parameter(int index, double value) {
  c_->p[index] = value;
  c_->table_time = std::numeric_limits<double>::quiet_NaN();  // time defines may use it
}
double PlantEvaluator::parameter(int index) const { return c_->p[index]; }

void PlantEvaluator::load(double t, const double* x, const double* u) {
  Compiled& c = *c_;
  *c.t = t;
  if (n_ > 0 && x) std::memcpy(c.x, x, sizeof(double) * static_cast<std::size_t>(n_));
  if (m_ > 0 && u) std::memcpy(c.u, u, sizeof(double) * static_cast<std::size_t>(m_));
  if (t != c.table_time) {
    for (std::size_t ti = 0; ti < def_->tables.size(); ++ti)
      def_->tables[ti]->evaluate(t, c.col + c.column_offset[ti]);
    for (std::size_t i = 0; i < c.defines.size(); ++i) c.def[i] = c.defines[i].eval();
    c.table_time = t;
  }
}

void PlantEvaluator::f(double t, const double* x, const double* u, double* xdot) {
  load(t, x, u);
  for (int i = 0; i < n_; ++i) xdot[i] = c_->f[static_cast<std::size_t>(i)].eval();
}

void PlantEvaluator::h(double t, const double* x, const double* u, double* y) {
  load(t, x, u);
  for (int i = 0; i < p_; ++i) y[i] = c_->h[static_cast<std::size_t>(i)].eval();
}

void PlantEvaluator::jacobians(double t, const double* x, const double* u, MatrixRef A, MatrixRef B) {
  load(t, x, u);
  A.setZero();
  for (const auto& e : c_->dfdx) A(e.row, e.col) = e.expr.eval();
  if (m_ > 0) {
    B.setZero();
    for (const auto& e : c_->dfdu) B(e.row, e.col) = e.expr.eval();
  }
}

void PlantEvaluator::output_jacobians(double t, const double* x, const double* u, MatrixRef C, MatrixRef D) {
  load(t, x, u);
  C.setZero();
  for (const auto& e : c_->dhdx) C(e.row, e.col) = e.expr.eval();
  if (m_ > 0) {
    D.setZero();
    for (const auto& e : c_->dhdu) D(e.row, e.col) = e.expr.eval();
  }
}

void PlantEvaluator::nominal_input(double t, double* u) {
  const NominalInputSpec& s = def_->nominal_input;
  switch (s.kind) {
    case NominalInputSpec::Kind::none:
      for (int i = 0; i < m_; ++i) u[i] = 0.0;
      return;
    case NominalInputSpec::Kind::expressions:
      load(t, nullptr, nullptr);
      for (int i = 0; i < m_; ++i) u[i] = c_->u_nominal[static_cast<std::size_t>(i)].eval();
      return;
    case NominalInputSpec::Kind::samples: {
      Eigen::Map<Eigen::VectorXd> out(u, m_);
      s.samples.value(t, out);
      return;
    }
    case NominalInputSpec::Kind::trajectory:
      for (int i = 0; i < m_; ++i) u[i] = s.trajectory->value(s.trajectory_columns[static_cast<std::size_t>(i)], t);
      return;
  }
}

}  // namespace ordex
