// The step proposal, the accepted-step bookkeeping and the guards every adaptive stepper
// applies after a trial step (stepper.hpp).
#include <algorithm>
#include <cmath>
#include <limits>
#include <string>

#include "io/errors.hpp"
#include "propagation/stepper.hpp"

namespace ordex {

TrialStep propose_step(double h, double remaining, double dir) {
  TrialStep s;
  s.size = h;
  if (h >= remaining * (1 - 1e-12)) {
    s.size = remaining;
    s.last = true;
  } else if (h > 0.7 * remaining) {
    s.size = 0.5 * remaining;  // avoid a sliver at the end
  }
  s.signed_length = dir * s.size;
  return s;
}

double StepController::next_factor(double e, bool natural_size) {
  if (e <= 1.0) {
    // A trial cut short (to land on a leg's end, or to avoid a sliver) has a small error that
    // says nothing of the next step's: the plain law for it, and it does not become e_prev.
    // Otherwise a grid of short legs (interval maps, discrete models) sees a falling error as
    // a rising one and halves every step.
    const double alpha = natural_size ? alpha_ : 1.0 / k_;
    const double integral = natural_size ? std::pow(e_prev_, beta_) : 1.0;
    double f = e > 0 ? 0.9 * std::pow(e, -alpha) * integral : max_;
    f = std::min(after_rejection_ ? 1.0 : max_, std::max(min_, f));
    if (natural_size) e_prev_ = std::max(e, 1e-4);  // a tiny error says little about the next one
    after_rejection_ = false;
    return f;
  }
  after_rejection_ = true;
  const double f = std::isfinite(e) ? 0.9 * std::pow(e, -1.0 / k_) : 0.0;
  return std::min(0.9, std::max(min_, f));
}

void accept_step(const TrialStep& trial, double b, double factor, double& t, double& h, long& steps_here,
                 PropagationStats& stats, const std::function<void(double)>& progress) {
  t = trial.last ? b : t + trial.signed_length;
  ++stats.steps;
  ++steps_here;
  if (!trial.last || factor < 1) h = trial.size * factor;  // keep the long step for the next leg
  if (progress && (steps_here & 63) == 0) progress(t);
}

void check_step_progress(const Generator& g, const PropagationOptions& o, double t, double b, double h,
                         long trials, bool last_trial_finite) {
  const double dir = b >= t ? 1.0 : -1.0;
  if (h < 64 * std::numeric_limits<double>::epsilon() * std::max(1.0, std::abs(t))) {
    // The model's own diagnosis (an entry that is not finite or blows up just ahead) leads.
    if (!last_trial_finite)
      throw NumericalError(with_diagnosis(g, t, dir, g.label + ": transition matrix is not finite at t = " +
                                                         format_number(t) + " (steps rejected down to underflow)"));
    throw NumericalError(with_diagnosis(g, t, dir, g.label + ": step size underflow at t = " + format_number(t)));
  }
  if (trials > o.max_steps)
    throw NumericalError(g.label + ": more than PropagationOptions::max_steps = " + std::to_string(o.max_steps) +
                         " steps before t = " + format_number(b) + " (reached t = " + format_number(t) + ")");
  // Checked every 4096 trials at the current step size, with a 10x margin so that a transient
  // of short steps is not mistaken for the pace.
  if ((trials & 4095) == 0) {
    const double projected = std::abs(b - t) / h;  // double: cannot overflow
    if (projected > 10.0 * static_cast<double>(o.max_steps - trials))
      throw NumericalError(g.label + ": the window to t = " + format_number(b) + " needs about " +
                           format_number(projected) + " more steps of " + format_number(h) + " (reached t = " +
                           format_number(t) + "), more than PropagationOptions::max_steps = " +
                           std::to_string(o.max_steps));
  }
}

}  // namespace ordex
