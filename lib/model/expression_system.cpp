#include "model/expression_system.hpp"

#include <cmath>
#include <limits>
#include <map>
#include <set>
#include <stdexcept>

#include "io/errors.hpp"

namespace ordex {

struct ExpressionSystem::CompiledMatrix {
  struct Entry {
    Eigen::Index row, col;
    Expression expr;
    std::string key;
  };
  Eigen::MatrixXd base;        // numbers and time-independent expressions, stored once
  std::vector<Entry> varying;  // re-evaluated at every new t
};

struct ExpressionSystem::Compiled {
  // Every variable an expression reads lives here: [0] = t, then the tables' columns, then the
  // time-dependent [define] entries. Allocated once, so the addresses the parsers hold stay put.
  std::unique_ptr<double[]> slots;
  SymbolScope scope;
  struct TableSlot {
    const TimeTable* table;
    double* out;
  };
  std::vector<TableSlot> tables;
  struct Define {
    std::string name, key;
    Expression expr;
    double* slot;
  };
  std::vector<Define> defines;  // time-dependent ones, in file order
  std::map<std::string, double> constant_defines;
  std::map<std::string, double*> column_slots;
  CompiledMatrix A, B, C, D;
  mutable double last_t = std::numeric_limits<double>::quiet_NaN();
};

namespace {

std::string where(const ModelSpec& spec, const std::string& key) { return spec.path + ": " + key; }

}  // namespace

ExpressionSystem::ExpressionSystem(ModelSpec spec) : spec_(std::move(spec)), c_(std::make_unique<Compiled>()) {
  info_ = spec_.info;
  Compiled& c = *c_;
  std::size_t columns = 0;
  for (const TableSpec& ts : spec_.tables) columns += ts.table->columns().size();
  std::size_t nslots = 1 + columns + spec_.defines.size();
  c.slots = std::make_unique<double[]>(nslots);
  for (std::size_t i = 0; i < nslots; ++i) c.slots[i] = 0.0;
  double* next = c.slots.get();
  c.scope.add_variable("t", next++);

  // Who owns each name, for collision messages.
  std::map<std::string, std::string> owner;
  for (const auto& p : spec_.parameters) {
    c.scope.add_constant(p.first, p.second);
    owner[p.first] = "parameters." + p.first;
  }
  for (const TableSpec& ts : spec_.tables) {
    c.tables.push_back({ts.table.get(), next});
    for (const std::string& col : ts.table->columns()) {
      auto o = owner.find(col);
      if (o != owner.end())
        throw InputError(where(spec_, ts.key) + ": column '" + col + "' of " + ts.table->path() +
                         " has the same name as " + o->second);
      owner[col] = "column '" + col + "' of " + ts.table->path();
      c.column_slots[col] = next;
      c.scope.add_variable(col, next++);
    }
  }
  for (const DefineSpec& d : spec_.defines) {
    auto o = owner.find(d.name);
    if (o != owner.end())
      throw InputError(where(spec_, d.value.key) + ": '" + d.name + "' is already " + o->second);
    owner[d.name] = d.value.key;
    c.scope.add_unavailable(d.name, "'" + d.name + "' is defined later (" + d.value.key + ", line " +
                                        std::to_string(d.line) +
                                        "); a [define] entry may use only the entries above it");
  }

  for (const DefineSpec& d : spec_.defines) {
    const std::string w = where(spec_, d.value.key);
    if (d.value.is_number) {
      c.constant_defines[d.name] = d.value.number;
      c.scope.add_constant(d.name, d.value.number);
      continue;
    }
    c.scope.add_unavailable(d.name, "'" + d.name + "' refers to itself");
    Expression e(d.value.text, c.scope, w);
    if (e.is_constant()) {
      double v = e.eval();
      if (!std::isfinite(v)) throw InputError(w + ": '" + d.value.text + "' evaluates to " + format_number(v));
      c.constant_defines[d.name] = v;
      c.scope.add_constant(d.name, v);
    } else {
      double* slot = next++;
      c.defines.push_back({d.name, d.value.key, std::move(e), slot});
      c.scope.add_variable(d.name, slot);
    }
  }

  auto compile = [&](const MatrixSpec& ms, CompiledMatrix& cm) {
    if (!ms.present) {
      cm.base = Eigen::MatrixXd::Zero(ms.rows, ms.cols);
      return;
    }
    cm.base.resize(ms.rows, ms.cols);
    for (int i = 0; i < ms.rows; ++i)
      for (int j = 0; j < ms.cols; ++j) {
        const EntrySpec& es = ms.entries[static_cast<std::size_t>(i * ms.cols + j)];
        if (es.is_number) {
          cm.base(i, j) = es.number;
          continue;
        }
        Expression e(es.text, c.scope, where(spec_, es.key));
        if (e.is_constant()) {
          cm.base(i, j) = e.eval();
        } else {
          cm.base(i, j) = 0.0;
          cm.varying.push_back({i, j, std::move(e), es.key});
        }
      }
  };
  compile(spec_.A, c.A);
  compile(spec_.B, c.B);
  compile(spec_.C, c.C);
  compile(spec_.D, c.D);
}

ExpressionSystem::~ExpressionSystem() = default;

void ExpressionSystem::refresh(double t) const {
  Compiled& c = *c_;
  if (t == c.last_t) return;
  c.last_t = std::numeric_limits<double>::quiet_NaN();  // stays invalid if a table throws
  c.slots[0] = t;
  for (const auto& ts : c.tables) ts.table->evaluate(t, ts.out);
  for (const auto& d : c.defines) *d.slot = d.expr.eval();
  c.last_t = t;
}

void ExpressionSystem::fill(const CompiledMatrix& m, double t, MatrixRef out) const {
  // A caller's wrong size would be a silent overrun in a release build: refuse it.
  if (out.rows() != m.base.rows() || out.cols() != m.base.cols())
    throw std::invalid_argument(spec_.path + ": a matrix of size " + std::to_string(out.rows()) + " x " +
                                std::to_string(out.cols()) + " was passed for one of size " +
                                std::to_string(m.base.rows()) + " x " + std::to_string(m.base.cols()));
  refresh(t);
  out = m.base;
  for (const auto& e : m.varying) {
    double v = e.expr.eval();
    if (!std::isfinite(v))
      throw NumericalError(spec_.path + ": " + e.key + " is " + format_number(v) + " at t = " +
                           format_number(t));
    out(e.row, e.col) = v;
  }
}

void ExpressionSystem::A(double t, MatrixRef out) const { fill(c_->A, t, out); }
void ExpressionSystem::B(double t, MatrixRef out) const { fill(c_->B, t, out); }
void ExpressionSystem::C(double t, MatrixRef out) const { fill(c_->C, t, out); }
void ExpressionSystem::D(double t, MatrixRef out) const { fill(c_->D, t, out); }

std::unique_ptr<System> ExpressionSystem::clone() const {
  return std::make_unique<ExpressionSystem>(spec_);
}

double ExpressionSystem::symbol_value(const std::string& name, double t) const {
  const Compiled& c = *c_;
  for (const auto& p : spec_.parameters)
    if (p.first == name) return p.second;
  auto k = c.constant_defines.find(name);
  if (k != c.constant_defines.end()) return k->second;
  refresh(t);
  for (const auto& d : c.defines)
    if (d.name == name) return *d.slot;
  auto col = c.column_slots.find(name);
  if (col != c.column_slots.end()) return *col->second;
  if (name == "t") return t;
  throw InputError(spec_.path + ": no parameter, definition or table column named '" + name + "'");
}

int ExpressionSystem::time_varying_entries() const {
  const Compiled& c = *c_;
  return static_cast<int>(c.A.varying.size() + c.B.varying.size() + c.C.varying.size() +
                          c.D.varying.size());
}

void ExpressionSystem::check_finite_at(double t) const {
  const Compiled& c = *c_;
  refresh(t);
  for (const auto& d : c.defines)
    if (!std::isfinite(*d.slot))
      throw InputError(spec_.path + ": " + d.key + ": '" + d.expr.text() + "' evaluates to " +
                       format_number(*d.slot) + " at t = " + format_number(t));
  for (const CompiledMatrix* m : {&c.A, &c.B, &c.C, &c.D}) {
    for (const auto& e : m->varying) {
      double v = e.expr.eval();
      if (!std::isfinite(v))
        throw InputError(spec_.path + ": " + e.key + ": '" + e.expr.text() + "' evaluates to " +
                         format_number(v) + " at t = " + format_number(t));
    }
    for (Eigen::Index i = 0; i < m->base.rows(); ++i)
      for (Eigen::Index j = 0; j < m->base.cols(); ++j)
        if (!std::isfinite(m->base(i, j)))
          throw InputError(spec_.path + ": " + std::string("matrices.") +
                           (m == &c.A ? "A" : m == &c.B ? "B" : m == &c.C ? "C" : "D") + "[" +
                           std::to_string(i + 1) + "][" + std::to_string(j + 1) + "]: evaluates to " +
                           format_number(m->base(i, j)));
  }
}

}  // namespace ordex
