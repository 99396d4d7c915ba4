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
  std::vector<double> breakpoints;                        ///< ascending; steps land on them
  /// G(t + period) = G(t) for all t (breakpoints repeat too); empty when not periodic.
  std::optional<double> period;
  std::string label = "A(t)";                             ///< names G in messages
};

/// G(t) = A(t) of SYS (SYS must outlive the generator). Breakpoints are the model's.
Generator state_generator(const System& sys);

}  // namespace ordex
