#pragma once
// An explicit embedded Runge-Kutta-Fehlberg 7(8) integrator (Fehlberg, NASA TR R-287, 1968;
// Boost.Odeint's runge_kutta_fehlberg78 with its step-size controller) on plain arrays, for the
// non-stiff, oscillating equations where CVODE is slow: on a lightly damped structure CVODE's
// Adams and BDF are held to a fraction of a radian per step by their stability regions on the
// imaginary axis, while this method takes a few radians per step (docs/performance.md, "The
// Riccati family on the flexible stack"). Same contract as OdeIntegrator (reset, advance to each
// target, breakpoints landed on with the coefficients taken from the side being integrated,
// step limit, non-finite values named); no dense output, so every target is a step end.
#include <functional>
#include <memory>
#include <string>
#include <vector>

#include "propagation/ode_integrator.hpp"

namespace ordex {

class ExplicitRk final : public OdeSolver {
 public:
  /// Uses PROBLEM's size, rhs, breakpoints, name_of and label (not the BDF callbacks or on_step),
  /// and OPTIONS' rtol, atol, max_steps, max_step and initial_step. A restart (reset) keeps the
  /// last step size: a restart after a measurement update needs no ramp.
  ExplicitRk(OdeProblem problem, OdeOptions options);
  ~ExplicitRk() override;
  ExplicitRk(const ExplicitRk&) = delete;
  ExplicitRk& operator=(const ExplicitRk&) = delete;

  void reset(double t0, const double* y0) override;
  void advance(double t, double* y) override;
  double time() const override;
  OdeStats stats() const override;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace ordex
