#pragma once
// A general CVODE integrator for y' = f(t, y) on plain arrays, for modules whose unknowns are
// not a transition matrix (the Riccati equation on the n(n+1)/2 entries of P, the Lyapunov
// differential equation of a Gramian, x' = A x + B u with an interpolated input).
// BDF uses Newton with GMRES; give jac_times and the preconditioner pair to make each linear
// solve O(n^3) (an exact preconditioner converges in one iteration). Without them GMRES runs
// matrix-free with difference quotients and no preconditioner.
#include <functional>
#include <memory>
#include <string>
#include <vector>

namespace ordex {

struct OdeProblem {
  int size = 0;  ///< number of unknowns
  /// ydot = f(t, y).
  std::function<void(double t, const double* y, double* ydot)> rhs;
  /// Optional: Jv = (df/dy)(t, y) v.
  std::function<void(double t, const double* y, const double* v, double* Jv)> jac_times;
  /// Optional: prepare to solve (I - gamma df/dy(t, y)) z = r.
  std::function<void(double t, const double* y, double gamma)> precond_setup;
  /// Optional: z = (I - gamma J)^-1 r with the matrices of the last precond_setup.
  std::function<void(const double* r, double* z)> precond_solve;
  /// Times where f may jump: integration stops there and restarts cleanly.
  std::vector<double> breakpoints;
  /// Optional: called after every accepted internal step with the time, the solution and
  /// CVODE's estimate of that step's local error (size values each).
  std::function<void(double t, const double* y, const double* local_error)> on_step;
  std::string label = "ODE";  ///< names the problem in messages
};

enum class OdeScheme { Adams, Bdf };

struct OdeOptions {
  /// Adams (fixed-point iteration, non-stiff) or BDF (Newton-GMRES, stiff); default Bdf.
  OdeScheme scheme = OdeScheme::Bdf;
  /// Relative tolerance, default 1e-8.
  double rtol = 1e-8;
  /// Absolute tolerance, default 1e-10.
  double atol = 1e-10;
  /// Step limit per advance() call before a NumericalError; default 10^7.
  long max_steps = 10000000;
  /// Largest step; 0 (default) means no limit.
  double max_step = 0.0;
  /// Throws InputError when out of range.
  void validate() const;
};

struct OdeStats {
  long steps = 0, rhs_evaluations = 0, error_test_failures = 0, linear_iterations = 0;
};

class OdeIntegrator {
 public:
  OdeIntegrator(OdeProblem problem, OdeOptions options);
  ~OdeIntegrator();
  OdeIntegrator(const OdeIntegrator&) = delete;
  OdeIntegrator& operator=(const OdeIntegrator&) = delete;

  /// Starts (or restarts) at t0 with y0 (size() values).
  void reset(double t0, const double* y0);
  /// Integrates from the current time to T (forward or backward; the direction must not
  /// change between resets), landing exactly on T and on every breakpoint on the way.
  /// Writes y(T) into Y. Throws NumericalError "LABEL: ... at t = ..." on failure.
  void advance(double t, double* y);
  /// Current time.
  double time() const;
  /// Counts accumulated since construction.
  OdeStats stats() const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace ordex
