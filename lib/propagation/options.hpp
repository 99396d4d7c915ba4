#pragma once
// Options of the transition-matrix engine.
#include <functional>
#include <string>

namespace ordex {

/// Integration method (CONTRACT.md --method).
enum class Method {
  Auto,     ///< Magnus6 for every plant (README "Choosing a method"; docs/performance.md, issue 9:
            ///< magnus6 was the fastest engine method at matched accuracy on every bench case, and
            ///< since overflowing trial steps are retried it also completes the stiff cases)
  Magnus4,  ///< Magnus order 4, two Gauss-Legendre nodes, adaptive by step doubling
  Magnus6,  ///< Magnus order 6, three Gauss-Legendre nodes, adaptive by step doubling
  Adams,    ///< CVODE Adams-Moulton with fixed-point iteration on vec(Phi) (non-stiff)
  Bdf,      ///< CVODE BDF with Newton; linear solves use the blocks I - gamma A(t) (stiff)
  Rk8       ///< explicit Runge-Kutta of order 8 (Dormand-Prince 8(5,3) estimators) on the step map
};

/// "auto", "magnus4", "magnus6", "adams", "bdf", "rk8".
std::string method_name(Method m);
/// Inverse of method_name; throws InputError "PropagationOptions::method: unknown method 'x'
/// (choose ...)".
Method parse_method(const std::string& name);

struct PropagationOptions {
  /// Method; default Auto.
  Method method = Method::Auto;
  /// Relative tolerance of each step's local error, default 1e-8. Must lie in [1e-14, 1e-1].
  double rtol = 1e-8;
  /// Absolute tolerance of each step's local error, default 1e-10. Must be > 0.
  double atol = 1e-10;
  /// First step size; default 0 means chosen from the size of G at the start.
  double initial_step = 0.0;
  /// Largest step size; default 0 means no limit but the window and the breakpoints.
  double max_step = 0.0;
  /// Largest number of steps in one call before it fails as a numerical error; default 10^7.
  long max_steps = 10000000;
  /// For a periodic generator and a window of two periods or more, compute Phi(t1, t0) as
  /// Phi(t0 + r, t0) M^k from the monodromy matrix M = Phi(t0 + T, t0) (Floquet): one period is
  /// integrated instead of k, and the result is more accurate too. Default true.
  bool use_period = true;
  /// Threads for one window, default 1. With N >= 2 (and a model that can be copied for other
  /// threads), transition(t0, t1) integrates N equal pieces of the window at once, each from
  /// the identity, and multiplies them (Phi(t2, t0) = Phi(t2, t1) Phi(t1, t0) exactly; the error
  /// matrices are carried through the product). Modules that already run windows on threads
  /// leave it at 1. At most 64.
  int threads = 1;
  /// Called now and then with the fraction of the window done, for progress reports; may be
  /// empty (default).
  std::function<void(double fraction)> progress;

  /// Throws InputError naming the field when it is out of range, in the form
  /// "PropagationOptions::rtol = 1 is outside [1e-14, 0.1]".
  void validate() const;
};

/// What a propagation cost and how accurate it is believed to be.
struct PropagationStats {
  Method method = Method::Auto;  ///< the method actually used (never Auto)
  long steps = 0;                ///< accepted steps
  long rejected_steps = 0;       ///< rejected steps (adaptive Magnus) or error test failures (CVODE)
  long evaluations = 0;          ///< evaluations of the generator G(t)
  /// Estimated largest absolute error in any entry of the last transition matrix returned
  /// (for interval maps: the largest over the intervals).
  double error_estimate = 0.0;
};

}  // namespace ordex
