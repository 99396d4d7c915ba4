#include "model/expression_system.hpp"

#include <algorithm>
#include <cmath>
#include <functional>
#include <limits>
#include <map>
#include <set>
#include <stdexcept>

#include "io/errors.hpp"
#include "model/entry_diagnosis.hpp"
#include "model/expression_switching.hpp"

namespace ordex {

struct ExpressionSystem::CompiledMatrix {
  struct Entry {
    Eigen::Index row, col;
    Expression expr;
    std::string key;
  };
  Eigen::MatrixXd base;        // numbers and time-independent expressions, stored once
  std::vector<Entry> varying;  // re-evaluated at every new t
  std::vector<Entry> by_parameters;  // read free parameters but not t: into base at each change
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
  std::vector<Define> parameter_defines;  // read free parameters but not t, in file order
  std::vector<double*> free_slots;        // the free parameters' variables, in free_ order
  std::set<std::string> time_names;       // variables that change with t
  bool depends_on_time(const Expression& e) const {
    for (const std::string& v : e.variables_used())
      if (time_names.count(v)) return true;
    return false;
  }
  std::map<std::string, double> constant_defines;
  std::map<std::string, double*> column_slots;
  CompiledMatrix A, B, C, D;
  // Switching functions of the time-dependent entries (expression_switching.hpp).
  struct Switch {
    Expression expr;
    SwitchKind kind;
    std::string key, construct;
  };
  std::vector<Switch> switches;
  std::vector<std::string> switch_notes;  // entries whose switching functions could not be built
  mutable double last_t = std::numeric_limits<double>::quiet_NaN();
};

namespace {

std::string where(const ModelSpec& spec, const std::string& key) { return spec.path + ": " + key; }

}  // namespace

ExpressionSystem::ExpressionSystem(ModelSpec spec) : ExpressionSystem(std::move(spec), {}) {}

ExpressionSystem::ExpressionSystem(ModelSpec spec, std::vector<std::string> free)
    : spec_(std::move(spec)), free_(std::move(free)), c_(std::make_unique<Compiled>()) {
  info_ = spec_.info;
  Compiled& c = *c_;
  for (std::size_t i = 0; i < free_.size(); ++i) {
    const std::string& name = free_[i];
    if (std::find(free_.begin(), free_.begin() + static_cast<std::ptrdiff_t>(i), name) != free_.begin() + static_cast<std::ptrdiff_t>(i))
      throw InputError(spec_.path + ": parameter '" + name + "' is given twice");
    if (std::none_of(spec_.parameters.begin(), spec_.parameters.end(), [&](const auto& p) { return p.first == name; })) {
      std::string names;
      for (const auto& p : spec_.parameters) names += (names.empty() ? "" : ", ") + p.first;
      throw InputError(spec_.path + ": the model has no parameter '" + name + "' (" +
                       (names.empty() ? std::string("it declares no [parameters]") : "its parameters: " + names) + ")");
    }
    for (const auto& [key, reads] : spec_.parameter_settings)
      if (std::find(reads.begin(), reads.end(), name) != reads.end())
        throw InputError(spec_.path + ": " + key + " is computed from parameter '" + name +
                         "' once at load: '" + name + "' cannot be varied in place (use --set for each value)");
  }
  std::size_t columns = 0;
  for (const TableSpec& ts : spec_.tables) columns += ts.table->columns().size();
  std::size_t nslots = 1 + columns + spec_.defines.size() + free_.size();
  c.slots = std::make_unique<double[]>(nslots);
  for (std::size_t i = 0; i < nslots; ++i) c.slots[i] = 0.0;
  double* next = c.slots.get();
  c.scope.add_variable("t", next++);
  c.time_names.insert("t");

  // Who owns each name, for collision messages.
  std::map<std::string, std::string> owner;
  c.free_slots.resize(free_.size());
  for (const auto& p : spec_.parameters) {
    const auto f = std::find(free_.begin(), free_.end(), p.first);
    if (f == free_.end()) {
      c.scope.add_constant(p.first, p.second);
    } else {
      double* slot = next++;
      *slot = p.second;
      c.free_slots[static_cast<std::size_t>(f - free_.begin())] = slot;
      c.scope.add_variable(p.first, slot);
    }
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
      c.time_names.insert(col);
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
      const bool timed = c.depends_on_time(e);
      if (timed) c.time_names.insert(d.name);
      (timed ? c.defines : c.parameter_defines).push_back({d.name, d.value.key, std::move(e), slot});
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
          (c.depends_on_time(e) ? cm.varying : cm.by_parameters).push_back({i, j, std::move(e), es.key});
        }
      }
  };
  compile(spec_.A, c.A);
  compile(spec_.B, c.B);
  compile(spec_.C, c.C);
  compile(spec_.D, c.D);

  // Non-smooth constructs of everything that varies with t: [define] entries and matrix entries.
  auto watch = [&](const std::string& text, const std::string& key) {
    try {
      for (const SwitchingFunction& f : switching_functions(text, where(spec_, key))) {
        Expression e(f.text, c.scope, where(spec_, key));
        if (!c.depends_on_time(e)) continue;  // switches on parameters only: never within a window
        c.switches.push_back({std::move(e), f.kind, key, f.construct});
      }
    } catch (const InputError& e) {
      c.switch_notes.push_back(std::string(e.what()) + ": its switching times are not searched");
    }
  };
  for (const auto& d : c.defines) watch(d.expr.text(), d.key);
  for (const CompiledMatrix* m : {&c.A, &c.B, &c.C, &c.D})
    for (const auto& e : m->varying) watch(e.expr.text(), e.key);
  update_parameters();
}

ExpressionSystem::~ExpressionSystem() = default;

void ExpressionSystem::update_parameters() {
  Compiled& c = *c_;
  c.last_t = std::numeric_limits<double>::quiet_NaN();  // time-dependent values are stale
  for (const auto& d : c.parameter_defines) {
    *d.slot = d.expr.eval();
    if (!std::isfinite(*d.slot))
      throw InputError(where(spec_, d.key) + ": '" + d.expr.text() + "' evaluates to " + format_number(*d.slot));
  }
  for (CompiledMatrix* m : {&c.A, &c.B, &c.C, &c.D})
    for (const auto& e : m->by_parameters) {
      const double v = e.expr.eval();
      if (!std::isfinite(v))
        throw InputError(where(spec_, e.key) + ": '" + e.expr.text() + "' evaluates to " + format_number(v));
      m->base(e.row, e.col) = v;
    }
}

void ExpressionSystem::set_parameters(const std::vector<double>& values) {
  if (values.size() != free_.size())
    throw std::invalid_argument("ExpressionSystem::set_parameters: " + std::to_string(values.size()) +
                                " values for " + std::to_string(free_.size()) + " free parameters");
  Compiled& c = *c_;
  for (std::size_t i = 0; i < free_.size(); ++i) {
    *c.free_slots[i] = values[i];
    for (auto* list : {&spec_.parameters, &info_.parameters})
      for (auto& p : *list)
        if (p.first == free_[i]) p.second = values[i];
  }
  spec_.info.parameters = info_.parameters;
  update_parameters();
}

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
      throw NumericalError(spec_.path + ": " + e.key + " = " + e.expr.text() + " is not finite (" +
                           format_number(v) + ") at t = " + format_number(t));
    out(e.row, e.col) = v;
  }
}

void ExpressionSystem::A(double t, MatrixRef out) const { fill(c_->A, t, out); }
void ExpressionSystem::B(double t, MatrixRef out) const { fill(c_->B, t, out); }
void ExpressionSystem::C(double t, MatrixRef out) const { fill(c_->C, t, out); }
void ExpressionSystem::D(double t, MatrixRef out) const { fill(c_->D, t, out); }

std::unique_ptr<System> ExpressionSystem::clone() const {
  return std::make_unique<ExpressionSystem>(spec_, free_);
}

double ExpressionSystem::symbol_value(const std::string& name, double t) const {
  const Compiled& c = *c_;
  for (const auto& p : spec_.parameters)
    if (p.first == name) return p.second;
  auto k = c.constant_defines.find(name);
  if (k != c.constant_defines.end()) return k->second;
  for (const auto& d : c.parameter_defines)
    if (d.name == name) return *d.slot;
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
  }
  check_constant_entries();
}

void ExpressionSystem::check_constant_entries() const {
  const Compiled& c = *c_;
  for (const CompiledMatrix* m : {&c.A, &c.B, &c.C, &c.D})
    for (Eigen::Index i = 0; i < m->base.rows(); ++i)
      for (Eigen::Index j = 0; j < m->base.cols(); ++j)
        if (!std::isfinite(m->base(i, j)))
          throw InputError(spec_.path + ": " + std::string("matrices.") +
                           (m == &c.A ? "A" : m == &c.B ? "B" : m == &c.C ? "C" : "D") + "[" +
                           std::to_string(i + 1) + "][" + std::to_string(j + 1) + "]: evaluates to " +
                           format_number(m->base(i, j)));
}

std::string ExpressionSystem::diagnose_entries(double t, double direction) const {
  const Compiled& c = *c_;
  std::vector<std::string> names;
  const std::pair<const MatrixSpec*, const CompiledMatrix*> mats[] = {
      {&spec_.A, &c.A}, {&spec_.B, &c.B}, {&spec_.C, &c.C}, {&spec_.D, &c.D}};
  for (const auto& [ms, cm] : mats) {
    if (!ms->present) continue;
    for (const EntrySpec& es : ms->entries) names.push_back(es.is_number ? es.key : es.key + " = " + es.text);
  }
  const EntryEvaluator eval = [&](double tt, std::vector<double>& out) {
    try {
      refresh(tt);
      std::size_t k = 0;
      for (const auto& [ms, cm] : mats) {
        if (!ms->present) continue;
        const std::size_t first = k;
        for (Eigen::Index i = 0; i < cm->base.rows(); ++i)
          for (Eigen::Index j = 0; j < cm->base.cols(); ++j) out[k++] = cm->base(i, j);
        for (const auto& e : cm->varying) out[first + static_cast<std::size_t>(e.row * cm->base.cols() + e.col)] = e.expr.eval();
      }
      return true;
    } catch (const std::exception&) {
      return false;
    }
  };
  const std::string d = diagnose_entry_values(names, eval, t, direction);
  return d.empty() ? d : spec_.path + ": " + d;
}

int ExpressionSystem::switching_functions_count() const { return static_cast<int>(c_->switches.size()); }

namespace {

/// How far VALUE is from changing level, for deciding whether a cell whose ends share a level
/// may still hide two changes.
double distance_to_switch(SwitchKind kind, double v) {
  if (kind == SwitchKind::Floor) return std::min(v - std::floor(v), std::ceil(v) - v);
  return std::abs(v);
}

constexpr std::size_t kMaxSwitchingTimes = 100000;

}  // namespace

std::vector<double> ExpressionSystem::switching_times(double a, double b, std::vector<std::string>* notes) const {
  const Compiled& c = *c_;
  if (notes)
    for (const auto& n : c.switch_notes) notes->push_back(n);
  std::vector<double> found;
  if (c.switches.empty() || !(b > a) || !std::isfinite(a) || !std::isfinite(b)) return found;
  // The grid: at least 4096 cells over the window, and 64 per period of a periodic model.
  double cells = 4096;
  if (info_.period && *info_.period > 0) cells = std::max(cells, 64 * (b - a) / *info_.period);
  cells = std::min(cells, double(1 << 20));
  for (const auto& sw : c.switches) {
    std::string failure;
    double fail_t = 0;
    auto value = [&](double t, double& v) {
      try {
        refresh(t);
        v = sw.expr.eval();
      } catch (const std::exception&) {
        v = std::numeric_limits<double>::quiet_NaN();
      }
      if (!std::isfinite(v) && failure.empty()) {
        failure = "cannot be evaluated";
        fail_t = t;
      }
      return std::isfinite(v);
    };
    auto level = [&](double v) { return switch_level(sw.kind, v); };
    std::vector<double> roots;
    // Every change of level inside [lo, hi] whose ends have the values vlo, vhi: bisection to
    // adjacent doubles for the first change, repeated while the level still differs.
    std::function<void(double, double, double, double, int)> cell = [&](double lo, double hi, double vlo, double vhi,
                                                                       int depth) {
      if (roots.size() > kMaxSwitchingTimes || !failure.empty()) return;
      if (level(vlo) == level(vhi)) {
        // Same level at both ends: look inside when the function passes near its switching
        // level (a double change, or a touch) within what it varies over the cell.
        const double near = std::min(distance_to_switch(sw.kind, vlo), distance_to_switch(sw.kind, vhi));
        if (depth >= 4 || !(near < 2 * std::abs(vhi - vlo) || near == 0)) return;
        double prev = lo, vprev = vlo;
        for (int k = 1; k <= 8; ++k) {
          const double t = k == 8 ? hi : lo + (hi - lo) * k / 8;
          double v = vhi;
          if (k < 8 && !value(t, v)) return;
          cell(prev, t, vprev, v, depth + 1);
          prev = t;
          vprev = v;
        }
        return;
      }
      double l = lo, h = hi, vl = vlo;
      while (true) {
        const double m = 0.5 * (l + h);
        if (!(m > l && m < h)) break;
        double vm;
        if (!value(m, vm)) return;
        if (level(vm) == level(vl)) {
          l = m;
          vl = vm;
        } else {
          h = m;
        }
      }
      roots.push_back(h);
      if (h < hi) {
        double vh;
        if (!value(h, vh)) return;
        if (level(vh) != level(vhi)) cell(h, hi, vh, vhi, depth);
      }
    };
    for (double n = cells;; n *= 8) {
      roots.clear();
      failure.clear();
      const long N = static_cast<long>(n);
      double tprev = a, vprev;
      if (!value(a, vprev)) break;
      for (long k = 1; k <= N && failure.empty() && roots.size() <= kMaxSwitchingTimes; ++k) {
        const double t = k == N ? b : a + (b - a) * static_cast<double>(k) / static_cast<double>(N);
        double v;
        if (!value(t, v)) break;
        // Keep every sample's neighbourhood in view: a cell is examined with its own ends.
        cell(tprev, t, vprev, v, 0);
        tprev = t;
        vprev = v;
      }
      // Dense changes (more than one per 8 cells) suggest the grid may step over some: refine.
      if (!failure.empty() || roots.size() * 8 <= static_cast<std::size_t>(N) || n * 8 > double(1 << 20)) break;
    }
    if (!failure.empty()) {
      if (notes)
        notes->push_back(spec_.path + ": " + sw.key + ": the switching function of '" + sw.construct + "' " + failure +
                         " at t = " + format_number(fail_t) + ": its switching times in the window are not located");
      continue;
    }
    if (roots.size() > kMaxSwitchingTimes) {
      if (notes)
        notes->push_back(spec_.path + ": " + sw.key + ": '" + sw.construct + "' switches more than " +
                         std::to_string(kMaxSwitchingTimes) + " times in the window: not all switching times are located");
      roots.resize(kMaxSwitchingTimes);
    }
    for (double r : roots) found.push_back(r);
  }
  // A function that is exactly zero at a double changes level twice there (-1 -> 0 -> 1): one
  // switching time. Times within a few units in the last place of each other, or of the window's
  // ends, are one.
  auto close = [](double x, double y) { return std::abs(x - y) <= 1e-13 * std::max(1.0, std::abs(x)); };
  std::sort(found.begin(), found.end());
  found.erase(std::unique(found.begin(), found.end(), close), found.end());
  found.erase(std::remove_if(found.begin(), found.end(),
                             [&](double r) { return !(r > a && r < b) || close(r, a) || close(r, b); }),
              found.end());
  return found;
}

}  // namespace ordex
