#pragma once
// What the engine integrates: a square matrix function G(t) whose transition matrix
// (dX/dt = G(t) X, X(t0) = I) is wanted. For ordex-propagate G = A(t); other modules hand the
// engine their own block generators (Van Loan's [[A, B B'], [0, -A']] for Gramians, the
// Riccati Hamiltonian, [[A, B], [0, 0]] for held inputs) and read transition matrices back.
#include <functional>
#include <optional>
#include <string>
#include <vector>

#include "model/system.hpp"

namespace ordex {

struct Generator {
  int dim = 0;                                            ///< G is dim x dim
  std::function<void(double t, MatrixRef out)> eval;      ///< writes G(t); must not allocate
  /// Ascending; steps land on them. Declared breakpoints, a linear table's sample times and the
  /// switching times found in the model's expressions over the window the generator was built for.
  std::vector<double> breakpoints;
  /// G(t + period) = G(t) for all t (breakpoints repeat too); empty when not periodic.
  std::optional<double> period;
  std::string label = "A(t)";                             ///< names G in messages
  /// When k > 0, G(t) = [[F, S], [0, -F']] for every t, with F and S k x k and S symmetric:
  /// Van Loan's generator of a Gramian (dim = 2k). Every Magnus Omega built from it keeps the
  /// form, so the steppers form commutators and products on the blocks (block_algebra.hpp):
  /// a commutator costs 4 k x k products instead of 16. 0 (the default): a general G.
  int van_loan_half = 0;
  /// Names the model entry that breaks down at or just beyond t in the given direction (+1/-1),
  /// or returns empty; may be empty itself (see with_diagnosis).
  std::function<std::string(double t, double direction)> diagnose;
  /// Entries whose switching times could not be located (one line each, for the report).
  std::vector<std::string> notes;
  /// Returns a generator whose eval and diagnose work on their own copy of the model, so that
  /// it may run on another thread at the same time as this one (the caller copies the other
  /// fields). Empty when the model cannot be copied so; the engine then stays on one thread.
  std::function<Generator()> fork;
};

/// G(t) = A(t) of SYS (SYS must outlive the generator). Breakpoints are the model's.
Generator state_generator(const System& sys);

/// As above, plus the switching times of SYS's non-smooth entries inside [t0, t1] (either
/// order) as breakpoints, and the notes of entries whose switching times were not found.
Generator state_generator(const System& sys, double t0, double t1);

/// Adds SYS's switching times inside [t0, t1] to G's breakpoints (sorted, duplicates merged)
/// and its notes to G.notes. For block generators built on SYS.
void add_switching_times(Generator& g, const System& sys, double t0, double t1);

/// MESSAGE prefixed by the generator's diagnosis of what breaks down at T (direction +1/-1):
/// "model.toml: matrices.A[2][1] = 1/(t-0.1) is not finite at t = 0.1 (MESSAGE)"; MESSAGE itself
/// when the generator has no diagnosis or finds nothing. For the engine's failure messages.
std::string with_diagnosis(const Generator& g, double t, double direction, const std::string& message);

}  // namespace ordex
