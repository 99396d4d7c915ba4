#pragma once
// A System defined by expressions (a loaded model file): what the file says, as plain data
// (ModelSpec), and the compiled form that evaluates A(t), B(t), C(t), D(t) without allocating.
#include <memory>
#include <string>
#include <utility>
#include <vector>

#include "model/expression.hpp"
#include "model/system.hpp"
#include "model/time_table.hpp"

namespace ordex {

/// One matrix entry as written: a number or an expression string.
struct EntrySpec {
  bool is_number = true;
  double number = 0;
  std::string text;  ///< the expression when !is_number
  std::string key;   ///< "matrices.A[2][1]" (1-based) for messages
};

/// One matrix of [matrices]; entries row-major. Absent matrices have present == false.
struct MatrixSpec {
  bool present = false;
  int rows = 0, cols = 0;
  std::vector<EntrySpec> entries;
};

/// One [define] entry, in file order.
struct DefineSpec {
  std::string name;
  EntrySpec value;  ///< key "define.NAME"
  int line = 0;     ///< line in the model file, for "defined later" messages
  int column = 0;   ///< column of the key (orders entries written on one line)
};

/// One [table] section, already read.
struct TableSpec {
  std::string key;                          ///< "table" or "table[2]"
  std::shared_ptr<const TimeTable> table;   ///< immutable, shared by clones
};

/// Everything a model file says, after --set overrides were applied.
struct ModelSpec {
  std::string path;                                        ///< the model file, for messages
  SystemInfo info;                                         ///< names, period, breakpoints, window
  std::vector<std::pair<std::string, double>> parameters;  ///< values in effect, file order
  std::vector<DefineSpec> defines;
  std::vector<TableSpec> tables;
  MatrixSpec A, B, C, D;
  /// Settings computed once at load from parameters (system.period, system.breakpoints[i],
  /// window.from/to): the key and the parameters it reads. A parameter listed here cannot be
  /// changed in place (ExpressionSystem::make_free).
  std::vector<std::pair<std::string, std::vector<std::string>>> parameter_settings;
};

class ExpressionSystem : public System {
 public:
  /// Compiles SPEC. Throws InputError "PATH: KEY: what" for any bad expression or a
  /// time-independent [define] entry that is not finite.
  explicit ExpressionSystem(ModelSpec spec);
  /// The same with the parameters FREE bound to variables instead of folded into the
  /// expressions, so that set_parameters changes them without parsing anything again (sweeps).
  /// Entries and [define] entries that read free parameters but not t are evaluated once per
  /// change. Throws InputError naming a free name that is no parameter, or a parameter the
  /// period, the breakpoints or the window are computed from (those are fixed at load).
  ExpressionSystem(ModelSpec spec, std::vector<std::string> free);
  ~ExpressionSystem() override;

  void A(double t, MatrixRef out) const override;
  void B(double t, MatrixRef out) const override;
  void C(double t, MatrixRef out) const override;
  void D(double t, MatrixRef out) const override;
  /// Recompiles the expressions against the copy's own variables (the tables are shared).
  std::unique_ptr<System> clone() const override;
  /// No matrix entry depends on t (directly, through [define] or through a table).
  bool time_invariant() const override { return time_varying_entries() == 0; }

  using System::A;
  using System::B;
  using System::C;
  using System::D;

  const ModelSpec& spec() const { return spec_; }
  /// The free parameters (constructor), in the order given.
  const std::vector<std::string>& free_parameters() const { return free_; }
  /// Sets the free parameters to VALUES (same order as free_parameters()) and re-evaluates what
  /// depends on them; info().parameters, spec() and clones follow. Throws InputError naming the
  /// first entry that is not finite with these values (the system must not be used then until
  /// a later call succeeds). Allocates nothing besides error messages.
  void set_parameters(const std::vector<double>& values);
  /// Value of parameter or [define] NAME at T (defines may depend on t). Throws InputError
  /// for an unknown name. For tests and reports; allocates.
  double symbol_value(const std::string& name, double t) const;
  /// Number of matrix entries re-evaluated at every t (the rest are stored constants).
  int time_varying_entries() const;
  /// Evaluates every matrix and time-dependent definition at T and throws InputError naming
  /// the first key whose value is not finite (the load-time check).
  void check_finite_at(double t) const override;
  /// Entries that do not depend on t must be finite whatever the window: checked at load.
  void check_constant_entries() const;

  /// Names the first entry (key and text) that is not finite, huge or blowing up at or just
  /// beyond T (entry_diagnosis.hpp).
  std::string diagnose_entries(double t, double direction) const override;
  /// The switching times in (A, B) of every non-smooth construct in the time-dependent [define]
  /// entries and matrix entries (expression_switching.hpp): each switching function is sampled
  /// on a grid fine for the window and the model's period (at least 4096 cells, refined where
  /// the function comes near its switching level between samples, made finer while the found
  /// times are dense), and each change of level is located by bisection to adjacent doubles.
  /// An entry whose switching function cannot be evaluated gets a line in NOTES instead.
  std::vector<double> switching_times(double a, double b, std::vector<std::string>* notes) const override;
  /// Number of switching functions found in the model's time-dependent entries.
  int switching_functions_count() const;

 private:
  struct Compiled;
  struct CompiledMatrix;
  void refresh(double t) const;
  void update_parameters();
  void fill(const CompiledMatrix& m, double t, MatrixRef out) const;

  ModelSpec spec_;
  std::vector<std::string> free_;
  std::unique_ptr<Compiled> c_;
};

}  // namespace ordex
