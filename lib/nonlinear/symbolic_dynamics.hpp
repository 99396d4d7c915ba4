#pragma once
// Exact Jacobians of x' = f(x, u, t), y = h(x, u, t) written as expression text: each entry is
// parsed symbolically (GiNaC, a private dependency), differentiated with respect to every state
// and input, and printed back as text for the models' fast evaluator (model/expression.hpp).
// No finite differences anywhere.
#include <string>
#include <vector>

namespace ordex {

/// The names and texts of a nonlinear model, as its file gives them.
struct SymbolicModel {
  std::string path;  ///< the model file, for messages
  std::vector<std::string> states, inputs, parameters, columns;  ///< columns: of the [table]s
  struct Text {
    std::string name;  ///< a [define] entry's name (empty for f and h)
    std::string key;   ///< "dynamics.f[2]", "define.r3": names the entry in messages
    std::string text;  ///< the expression (a number written as text)
  };
  std::vector<Text> defines;  ///< file order; may use states, inputs and earlier entries
  std::vector<Text> f;        ///< one per state
  std::vector<Text> h;        ///< one per output (may be empty)
};

/// The expressions to evaluate: [define] entries substituted, so that each text uses only t,
/// the states, inputs, parameters, table columns and pi.
struct SymbolicDynamics {
  struct Entry {
    int row = 0, col = 0;  ///< 0-based place in its matrix (col unused for f and h)
    std::string text;      ///< evaluable text (model/expression.hpp syntax)
    std::string key;       ///< "dynamics.f[2]" or "d dynamics.f[2] / d theta" for messages
  };
  std::vector<Entry> f, h;
  /// [define] entries that use neither states nor inputs (directly or through other entries),
  /// in file order: the evaluator computes them once per t and the derivatives treat them as
  /// functions of t alone, so they may use anything the models allow (true_anomaly, ?:, ...).
  /// Entry::key is the define's name here.
  std::vector<Entry> time_defines;
  /// The nonzero entries of df/dx, df/du, dh/dx, dh/du (structural zeros are left out).
  std::vector<Entry> dfdx, dfdu, dhdx, dhdu;
};

/// Checks every text against the names (unknown symbols, syntax: InputError "PATH: KEY: ...")
/// and differentiates. An entry of f or h, or a [define] entry that uses a state or an input, with a construct that has no derivative (comparisons, ?:,
/// floor, min, max, log10, true_anomaly) is an InputError naming its key.
SymbolicDynamics differentiate(const SymbolicModel& model);

}  // namespace ordex
