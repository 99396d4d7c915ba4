#pragma once
// Internal: one integration method behind the Propagator. A stepper advances X in place over a
// leg [a, b] that contains no breakpoint inside, and carries the running error estimate of X.
#include <Eigen/Dense>
#include <functional>
#include <memory>

#include "propagation/generator.hpp"
#include "propagation/options.hpp"

namespace ordex {

class StepperBase {
 public:
  virtual ~StepperBase() = default;
  /// Advances X from A to B (no breakpoint strictly inside). ERROR is the estimated (signed)
  /// error matrix of X on entry and is carried through the leg: each step maps it with the
  /// step's transition matrix and adds the step's local error, a linearized estimate of the
  /// global error rather than a norm bound (which grows far too fast on oscillatory systems).
  /// PROGRESS (may be empty) is called now and then with the time reached.
  virtual void advance(double a, double b, Eigen::MatrixXd& X, Eigen::MatrixXd& error,
                       PropagationStats& stats, const std::function<void(double)>& progress) = 0;
};

std::unique_ptr<StepperBase> make_magnus_stepper(const Generator& g, const PropagationOptions& o,
                                                 int order);
std::unique_ptr<StepperBase> make_runge_kutta8_stepper(const Generator& g, const PropagationOptions& o);
std::unique_ptr<StepperBase> make_cvode_stepper(const Generator& g, const PropagationOptions& o,
                                                bool stiff);

/// The adaptive steppers' guards after each trial step (TRIALS counted in this leg, H the next
/// step, T reached, B the leg's end): a NumericalError on step-size underflow (naming a
/// non-finite last trial), beyond PropagationOptions::max_steps trials, or, every 4096 trials,
/// when the steps still needed at the current size would exceed 10x the remaining budget (a
/// window far too long ends at once with the projected count rather than grinding on).
void check_step_progress(const Generator& g, const PropagationOptions& o, double t, double b, double h,
                         long trials, bool last_trial_finite);

/// Infinity norm (largest row sum of absolute values).
inline double norm_inf(const Eigen::MatrixXd& m) { return m.cwiseAbs().rowwise().sum().maxCoeff(); }

}  // namespace ordex
