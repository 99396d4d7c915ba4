// GiNaC stays inside this file: the rest of the library sees text in, text out.
#include "nonlinear/symbolic_dynamics.hpp"

#include <ginac/ginac.h>

#include <map>
#include <set>
#include <memory>
#include <sstream>

#include "io/errors.hpp"
#include "model/expression.hpp"

namespace ordex {
namespace {

std::string print(const GiNaC::ex& e) {
  std::ostringstream s;
  s << e;
  return s.str();
}

// The friendly first pass: the models' own parser names unknown symbols with a "did you mean"
// and reports syntax errors in the user's terms, before GiNaC sees the text.
class NameCheck {
 public:
  explicit NameCheck(const SymbolicModel& m) : slots_(1) {
    add("t");
    for (const auto* list : {&m.states, &m.inputs, &m.parameters, &m.columns})
      for (const std::string& n : *list) add(n);
  }
  void add(const std::string& name) { scope_.add_variable(name, &slots_[0]); }
  /// The names the text uses.
  std::vector<std::string> check(const SymbolicModel& m, const SymbolicModel::Text& e) const {
    return Expression(e.text, scope_, m.path + ": " + e.key).variables_used();
  }

 private:
  std::vector<double> slots_;
  SymbolScope scope_;
};

[[noreturn]] void not_differentiable(const SymbolicModel& m, const SymbolicModel::Text& e, const std::string& why) {
  throw InputError(m.path + ": " + e.key + ": '" + e.text +
                   "' cannot be differentiated exactly (" + why +
                   "); the Jacobians of a nonlinear model need smooth functions: comparisons, ?:, floor, min, "
                   "max and true_anomaly have no derivative here (log10(x): write log(x)/log(10))");
}

}  // namespace

SymbolicDynamics differentiate(const SymbolicModel& m) {
  // Names first, in the models' terms; defines in file order may use only earlier ones.
  // A define that uses a state or an input (or such a define) is substituted into f and h;
  // the others are functions of t, evaluated as they are.
  std::set<std::string> state_dependent(m.states.begin(), m.states.end());
  state_dependent.insert(m.inputs.begin(), m.inputs.end());
  std::vector<bool> time_only;
  {
    NameCheck progressive(m);
    for (const auto& d : m.defines) {
      bool depends = false;
      for (const std::string& used : progressive.check(m, d)) depends = depends || state_dependent.count(used) > 0;
      if (depends) state_dependent.insert(d.name);
      time_only.push_back(!depends);
      progressive.add(d.name);
    }
    for (const auto& e : m.f) progressive.check(m, e);
    for (const auto& e : m.h) progressive.check(m, e);
  }

  GiNaC::symtab table;
  std::vector<GiNaC::realsymbol> x, u;
  auto sym = [&](const std::string& n) {
    GiNaC::realsymbol s(n);
    table[n] = s;
    return s;
  };
  sym("t");
  sym("pi");  // a symbol that the evaluator knows as the constant; its derivative is zero
  for (const std::string& n : m.states) x.push_back(sym(n));
  for (const std::string& n : m.inputs) u.push_back(sym(n));
  for (const std::string& n : m.parameters) sym(n);
  for (const std::string& n : m.columns) sym(n);

  auto parse = [&](const SymbolicModel::Text& e) -> GiNaC::ex {
    try {
      GiNaC::parser reader(table, true);
      return reader(e.text);
    } catch (const std::exception& err) {
      std::string what = err.what();
      std::size_t nl = what.find('\n');
      if (nl != std::string::npos) what = what.substr(0, nl);
      std::size_t gi = what.find("GiNaC: ");
      if (gi != std::string::npos) what = what.substr(gi + 7);
      not_differentiable(m, e, what);
    }
  };
  SymbolicDynamics out;
  for (std::size_t i = 0; i < m.defines.size(); ++i) {
    const auto& d = m.defines[i];
    if (time_only[i]) {
      sym(d.name);
      out.time_defines.push_back({0, 0, d.text, d.name});
    } else {
      table[d.name] = parse(d);
    }
  }

  // Every printed text goes through the evaluator once here, so that a derivative the
  // evaluator cannot read (a function GiNaC introduced) fails at load with the entry named.
  std::vector<double> slot(1, 0.0);
  SymbolScope scope;
  scope.add_variable("t", &slot[0]);
  for (const auto* list : {&m.states, &m.inputs, &m.parameters, &m.columns})
    for (const std::string& n : *list) scope.add_variable(n, &slot[0]);
  for (const auto& d : out.time_defines) scope.add_variable(d.key, &slot[0]);
  auto emit = [&](std::vector<SymbolicDynamics::Entry>& to, int row, int col, const GiNaC::ex& e,
                  const SymbolicModel::Text& src, const std::string& key) {
    SymbolicDynamics::Entry entry{row, col, print(e), key};
    try {
      Expression check(entry.text, scope, m.path + ": " + key);
    } catch (const InputError& err) {
      not_differentiable(m, src, "its derivative '" + entry.text + "' uses what the evaluator lacks");
    }
    to.push_back(std::move(entry));
  };
  auto expand = [&](const std::vector<SymbolicModel::Text>& rows, std::vector<SymbolicDynamics::Entry>& values,
                    std::vector<SymbolicDynamics::Entry>& dx, std::vector<SymbolicDynamics::Entry>& du) {
    for (std::size_t i = 0; i < rows.size(); ++i) {
      const GiNaC::ex e = parse(rows[i]);
      const int r = static_cast<int>(i);
      emit(values, r, 0, e, rows[i], rows[i].key);
      for (std::size_t j = 0; j < x.size(); ++j) {
        GiNaC::ex d = e.diff(x[j]);
        if (!d.is_zero()) emit(dx, r, static_cast<int>(j), d, rows[i], "d " + rows[i].key + " / d " + m.states[j]);
      }
      for (std::size_t j = 0; j < u.size(); ++j) {
        GiNaC::ex d = e.diff(u[j]);
        if (!d.is_zero()) emit(du, r, static_cast<int>(j), d, rows[i], "d " + rows[i].key + " / d " + m.inputs[j]);
      }
    }
  };
  expand(m.f, out.f, out.dfdx, out.dfdu);
  expand(m.h, out.h, out.dhdx, out.dhdu);
  return out;
}

}  // namespace ordex
