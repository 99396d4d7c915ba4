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

/// One trial step of an adaptive stepper from t towards a leg's end b.
struct TrialStep {
  double size = 0;    ///< |length|
  double signed_length = 0;
  bool last = false;  ///< reaches b
};

/// The trial for the wanted step size H with REMAINING = |b - t| left (DIR = +1 or -1): H itself,
/// or the rest when H covers it, or half the rest when H would leave a sliver under 0.3 H.
TrialStep propose_step(double h, double remaining, double dir);

/// The bookkeeping of an accepted trial, the same in every adaptive stepper: T moves by the
/// trial (to B exactly when it is the last), the step counters advance, the next step size H
/// becomes the trial's size times FACTOR (a leg's last step, shortened to land on B, keeps the
/// longer H for the next leg unless the error asks for less) and PROGRESS, when set, hears of
/// it every 64 steps of the leg.
void accept_step(const TrialStep& trial, double b, double factor, double& t, double& h, long& steps_here,
                 PropagationStats& stats, const std::function<void(double)>& progress);

/// The adaptive steppers' guards after each trial step (TRIALS counted in this leg, H the next
/// step, T reached, B the leg's end): a NumericalError on step-size underflow (naming a
/// non-finite last trial), beyond PropagationOptions::max_steps trials, or, every 4096 trials,
/// when the steps still needed at the current size would exceed 10x the remaining budget (a
/// window far too long ends at once with the projected count rather than grinding on).
void check_step_progress(const Generator& g, const PropagationOptions& o, double t, double b, double h,
                         long trials, bool last_trial_finite);

/// G's Van Loan half (Generator::van_loan_half) when it splits G evenly, else 0: the split at
/// which the steppers form commutators and products on the blocks (block_algebra.hpp).
inline Eigen::Index van_loan_split(const Generator& g) {
  return g.van_loan_half > 0 && 2 * g.van_loan_half == g.dim ? g.van_loan_half : 0;
}

/// Infinity norm (largest row sum of absolute values).
inline double norm_inf(const Eigen::MatrixXd& m) { return m.cwiseAbs().rowwise().sum().maxCoeff(); }

}  // namespace ordex
