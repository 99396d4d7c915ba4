#pragma once
// The engine's one general integrator (CVODE) for y' = f(t, y) on plain arrays. Modules do not
// use it directly: they describe their equation to one of the services built on it,
//   SymmetricMatrixOdeSolver (symmetric_matrix_ode.hpp): Lyapunov and Riccati equations,
//   simulate_states (state_simulator.hpp): x' = A x + B u with interpolated inputs and feedback,
// and the transition-matrix engine's CVODE methods (cvode_phi.cpp).
// BDF uses Newton with GMRES; jac_times and the preconditioner pair make each linear solve as
// cheap as the problem allows (an exact preconditioner converges in one iteration). Without
// them GMRES runs matrix-free with difference quotients and no preconditioner.
//
// Failures stop the integration at once: a right-hand side that throws (a model evaluation
// that fails) or returns a non-finite value makes CVODE return immediately; advance() then
// rethrows the callback's exception, or throws NumericalError naming the unknown and t.
//
// Threads: an OdeIntegrator holds CVODE's memory and the problem's callbacks; use it from one
// thread at a time (one integrator per thread).
#include <functional>
#include <memory>
#include <string>
#include <vector>

#include "io/errors.hpp"
#include "propagation/options.hpp"

namespace ordex {

/// Thrown by a precond_setup that cannot factor its Newton matrix at this gamma (a singular
/// block): CVODE then retries with a smaller step. Any other exception from any callback,
/// including a NumericalError of the model, stops the integration at once.
class SingularNewtonMatrix : public NumericalError {
 public:
  using NumericalError::NumericalError;
};

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
  /// Times where f may jump: integration stops there and restarts cleanly. Every callback
  /// asked at a breakpoint that ends or starts the current leg gets a time moved just inside
  /// the leg (by 1e-10 of the leg's length), so a jump at the breakpoint is always seen from
  /// the side being integrated.
  std::vector<double> breakpoints;
  /// Optional: called after every accepted internal step with the time, the solution and
  /// CVODE's estimate of that step's local error (size values each).
  std::function<void(double t, const double* y, const double* local_error)> on_step;
  /// Optional: the name of unknown I in messages ("x_2", "P[1][0]"); default "y[I]".
  std::function<std::string(int i)> name_of;
  std::string label = "ODE";  ///< names the problem in messages
};

/// RungeKutta (explicit Runge-Kutta-Fehlberg 7(8), non-stiff, no dense output) is served by
/// SymmetricMatrixOdeSolver only (explicit_rk.hpp); OdeIntegrator refuses it.
enum class OdeScheme { Adams, Bdf, RungeKutta };

struct OdeOptions {
  /// Adams (fixed-point iteration, non-stiff) or BDF (Newton-GMRES, stiff); default Bdf.
  OdeScheme scheme = OdeScheme::Bdf;
  /// Relative tolerance, default 1e-8. Must lie in [1e-14, 0.1].
  double rtol = 1e-8;
  /// Absolute tolerance, default 1e-10. Must be > 0.
  double atol = 1e-10;
  /// Step limit per advance() call before a NumericalError; default 10^7.
  long max_steps = 10000000;
  /// Largest step; 0 (default) means no limit.
  double max_step = 0.0;
  /// First step; 0 (default) lets CVODE choose it.
  double initial_step = 0.0;
  /// Throws InputError naming the field ("OdeOptions::rtol = 1 is outside [1e-14, 0.1]").
  void validate() const;
};

/// The one conversion of the engine's options to the integrator's: tolerances, step limits
/// and first step from O; the scheme is Adams or Bdf when O.method names it, FALLBACK otherwise
/// (Auto and the Magnus methods, which have no meaning for these unknowns).
OdeOptions ode_options(const PropagationOptions& o, OdeScheme fallback);
/// The Method that names SCHEME (Adams or Bdf), for reports.
Method method_of(OdeScheme scheme);

struct OdeStats {
  long steps = 0, rhs_evaluations = 0, error_test_failures = 0, linear_iterations = 0;
  OdeStats& operator+=(const OdeStats& o);
};

/// What every integrator of an OdeProblem offers; the scheme is chosen once, at construction
/// (make_ode_solver).
class OdeSolver {
 public:
  virtual ~OdeSolver() = default;
  /// Starts (or restarts) at t0 with y0 (size() values).
  virtual void reset(double t0, const double* y0) = 0;
  /// Integrates from the current time to T (forward or backward; the direction must not
  /// change between resets), landing exactly on T and on every breakpoint on the way.
  /// Writes y(T) into Y. Throws NumericalError "LABEL: ... at t = ..." on failure (a value
  /// that stops being finite is named, and so is a step limit reached), or the exception a
  /// callback threw.
  virtual void advance(double t, double* y) = 0;
  /// Current time.
  virtual double time() const = 0;
  /// Counts accumulated since construction.
  virtual OdeStats stats() const = 0;
};

/// PROBLEM checked against OPTIONS (validated; a problem without unknowns or a right-hand side
/// is an InputError) with its breakpoints sorted and merged: what every OdeSolver starts from.
OdeProblem checked_problem(OdeProblem problem, const OdeOptions& options);

/// The solver of OPTIONS.scheme: ExplicitRk for RungeKutta (explicit_rk.hpp), CVODE's
/// OdeIntegrator for Adams and Bdf.
std::unique_ptr<OdeSolver> make_ode_solver(OdeProblem problem, OdeOptions options);

/// CVODE (Adams or BDF) on an OdeProblem.
class OdeIntegrator final : public OdeSolver {
 public:
  OdeIntegrator(OdeProblem problem, OdeOptions options);
  ~OdeIntegrator() override;
  OdeIntegrator(const OdeIntegrator&) = delete;
  OdeIntegrator& operator=(const OdeIntegrator&) = delete;

  void reset(double t0, const double* y0) override;
  void advance(double t, double* y) override;
  double time() const override;
  OdeStats stats() const override;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace ordex
