#pragma once
// Internal: one integration method behind the Propagator. A stepper advances X in place over a
// leg [a, b] that contains no breakpoint inside, and carries the running error estimate of X.
#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
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

/// The adaptive steppers' step-size controller: the factor by which the next trial's size
/// follows from this trial's weighted error E (accepted when E <= 1). Accepted steps use the
/// proportional-integral law 0.9 E^-alpha E_prev^beta (Hairer, Norsett & Wanner, Solving ODEs
/// I, Sec. IV.2), with alpha = 1/K - 0.75 beta for an estimate whose error goes like h^K, so
/// that a steady error ratio gives the plain 1/K law; it damps the overshoot into rejected
/// trials that the plain law shows on oscillatory plants. A rejected trial shrinks by the plain
/// law (at most 0.9), and the step after it may not grow (as in DOP853).
class StepController {
 public:
  /// K: the power of h in the error estimate; the factor stays within [MIN_FACTOR, MAX_FACTOR].
  StepController(double k, double min_factor, double max_factor, double beta = kBeta)
      : k_(k), alpha_(1.0 / k - 0.75 * beta), beta_(beta), min_(min_factor), max_(max_factor) {}
  /// The next step's size over this trial's, after a trial of weighted error E (may be
  /// infinite). NATURAL_SIZE: the trial had the size the controller asked for, not one cut
  /// short by the leg's end.
  double next_factor(double e, bool natural_size = true);
  /// beta, chosen by measurement (bench_propagation and the flexible stack, docs/performance.md).
  static constexpr double kBeta = 0.04;

 private:
  double k_, alpha_, beta_, min_, max_;
  double e_prev_ = 1.0;
  bool after_rejection_ = false;
};

/// RMS over the entries of the local error ERR of XNEW in units of atol + rtol |XNEW|, as CVODE
/// weighs them; above 1 fails the tolerance. (The scale max(|X|, |XNEW|) of the step's two ends
/// was tried: on a strongly decaying plant it let steps grow until the estimate was no longer
/// honest, which the Liouville check of tests/test_numbers_liouville.cpp caught.)
template <class M>
double weighted_rms(const M& err, const M& xnew, const PropagationOptions& o) {
  double sum = 0;
  for (Eigen::Index k = 0; k < err.size(); ++k) {
    const double r = err(k) / (o.atol + o.rtol * std::abs(xnew(k)));
    sum += r * r;
  }
  return std::sqrt(sum / static_cast<double>(err.size()));
}

/// G's Van Loan half (Generator::van_loan_half) when it splits G evenly, else 0: the split at
/// which the steppers form commutators and products on the blocks (block_algebra.hpp).
inline Eigen::Index van_loan_split(const Generator& g) {
  return g.van_loan_half > 0 && 2 * g.van_loan_half == g.dim ? g.van_loan_half : 0;
}

/// Infinity norm (largest row sum of absolute values).
inline double norm_inf(const Eigen::MatrixXd& m) { return m.cwiseAbs().rowwise().sum().maxCoeff(); }

}  // namespace ordex
