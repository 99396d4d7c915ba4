#pragma once
// The plant x' = A(t) x + B(t) u, y = C(t) x + D(t) u as every module sees it.
//
// Evaluation writes into caller-owned matrices of the right size, so a propagation step
// allocates nothing. A System is not thread-safe (expression models keep their variables
// inside); a thread that needs its own copy calls clone().
#include <Eigen/Dense>
#include <memory>
#include <optional>
#include <string>
#include <utility>
#include <vector>

namespace ordex {

using MatrixRef = Eigen::Ref<Eigen::MatrixXd>;

/// What a model declares besides its matrices.
struct SystemInfo {
  std::string title;                       ///< free text, may be empty
  std::string source;                      ///< where it came from (file path or "code")
  std::vector<std::string> state_names;    ///< n names, in state order
  std::vector<std::string> input_names;    ///< m names (empty: no inputs, no B, no D)
  std::vector<std::string> output_names;   ///< p names (empty: no outputs, no C, no D)
  std::optional<double> period;            ///< A, B, C, D repeat with this period
  std::vector<double> breakpoints;         ///< ascending times where entries may jump
  std::optional<std::pair<double, double>> window;  ///< default [from, to]
  /// Times outside which the model cannot be evaluated (tables that refuse to extrapolate);
  /// empty: defined for every t. DEFINED_BY names what limits it (a table's file).
  std::optional<std::pair<double, double>> defined_span;
  std::string defined_by;
  /// True when WINDOW is not a [window] the model declares but the common span of its tables
  /// (the default of apps that have no other source for the window).
  bool window_from_tables = false;
  /// Every file the model was read from: the model file, then its tables' CSV files. The apps
  /// refuse outputs that name one of them (check_outputs in io/output_file.hpp).
  std::vector<std::string> files_read;
  /// The model's parameters with the values in effect (after --set overrides), in file order;
  /// empty for a model built in C++. Report headers list them (model/model_report.hpp).
  std::vector<std::pair<std::string, double>> parameters;
};

class System {
 public:
  virtual ~System() = default;

  const SystemInfo& info() const { return info_; }
  int states() const { return static_cast<int>(info_.state_names.size()); }
  int inputs() const { return static_cast<int>(info_.input_names.size()); }
  int outputs() const { return static_cast<int>(info_.output_names.size()); }

  /// A(t) into OUT (n x n).
  virtual void A(double t, MatrixRef out) const = 0;
  /// B(t) into OUT (n x m). Only called when inputs() > 0.
  virtual void B(double t, MatrixRef out) const = 0;
  /// C(t) into OUT (p x n). Only called when outputs() > 0.
  virtual void C(double t, MatrixRef out) const = 0;
  /// D(t) into OUT (p x m); zero when the model has none.
  virtual void D(double t, MatrixRef out) const = 0;

  /// An independent copy for use on another thread.
  virtual std::unique_ptr<System> clone() const = 0;

  /// Threads: a System is never used by two threads at once; a module that works in parallel
  /// gives each thread its own clone(), and only when this returns true (the clones share no
  /// mutable state). Default true: expression and table models copy everything they hold.
  /// FunctionSystem says false unless its user allows it (its callbacks may share what they
  /// capture), and threaded modules then run on one thread.
  virtual bool clones_may_run_concurrently() const { return true; }

  /// True only when A, B, C and D are known not to depend on t at all (a model whose every
  /// entry is a constant). Modules may then reuse one step for intervals of equal length.
  /// False means "may vary", never "varies".
  virtual bool time_invariant() const { return false; }

  /// Why the model breaks down at or just beyond T (DIRECTION +1 forward, -1 backward): names the
  /// first entry that is not finite, too large to compute with, or blowing up there, e.g.
  /// "A[2][1] is not finite at t = 0.1"; empty when every entry looks sound. For failure
  /// messages only (allocates). The default probes A, B, C through the virtual evaluators
  /// (model/entry_diagnosis.cpp); models that know their entries' text override it.
  virtual std::string diagnose_entries(double t, double direction) const;

  /// Times in (A, B) where an entry may jump or kink without a declared breakpoint (switching
  /// times of comparisons, ?:, floor, abs, min, max), found by the model; NOTES receives one line
  /// per entry whose switching times could not be located. Default: none.
  virtual std::vector<double> switching_times(double a, double b, std::vector<std::string>* notes) const;

  // Convenience forms that allocate (not for inner loops).
  Eigen::MatrixXd A(double t) const;
  Eigen::MatrixXd B(double t) const;
  Eigen::MatrixXd C(double t) const;
  Eigen::MatrixXd D(double t) const;

  /// Sorted times strictly inside (a, b) (either order of a and b) where an entry may jump or
  /// kink: the declared breakpoints and the switching times found in the model's expressions
  /// (switching_times). Every module that builds an integration over a window takes its
  /// breakpoints from here, so undeclared discontinuities are landed on everywhere. NOTES (when
  /// given) receives the lines of entries whose switching times could not be located.
  std::vector<double> breakpoints_between(double a, double b, std::vector<std::string>* notes = nullptr) const;

  /// Throws InputError naming WHAT (e.g. "--from/--to") when [a, b] reaches outside
  /// info().defined_span, so a window the model cannot cover fails before any work; then
  /// checks that the model is finite at A, the start of the window in force (check_finite_at).
  void require_defined_on(double a, double b, const std::string& what) const;

  /// Throws InputError when an entry of A, B, C or D is not finite at T, naming it (a model
  /// with 1/t or log(t) cannot start at t = 0). The default evaluates the matrices; models that
  /// know their entries' text override it to name the key.
  virtual void check_finite_at(double t) const;

 protected:
  SystemInfo info_;
};

}  // namespace ordex
