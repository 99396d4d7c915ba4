// Magnus integrators of orders 4 and 6 with Gauss-Legendre nodes (Iserles & Norsett 1999;
// Blanes, Casas & Ros, BIT 40 (2000) 434-450; Blanes, Casas, Oteo & Ros, Phys. Rep. 470 (2009)
// 151-238, the schemes with two and three nodes). Steps are adaptive by step doubling: one step
// of h against two of h/2; their difference over 2^p - 1 estimates the local error of the pair
// of half steps, which is the result kept.
#include <algorithm>
#include <cmath>
#include <limits>

#include "io/errors.hpp"
#include "propagation/block_algebra.hpp"
#include "propagation/expm.hpp"
#include "propagation/stepper.hpp"

namespace ordex {
namespace {

class MagnusStepper : public StepperBase {
 public:
  MagnusStepper(const Generator& g, const PropagationOptions& o, int order)
      : g_(g), o_(o), order_(order), split_(van_loan_split(g)), controller_(order + 1.0, 0.2, 5.0) {
    const int n = g.dim;
    for (auto* m : {&a1_, &a2_, &a3_, &omega_, &c1_, &c2_, &t1_, &t2_, &full_, &h1_, &h2_,
                    &half_, &diff_, &xnew_, &err_, &delta_})
      m->resize(n, n);
    work_.resize(split_, split_);
  }

  void advance(double a, double b, Eigen::MatrixXd& X, Eigen::MatrixXd& error, PropagationStats& stats,
               const std::function<void(double)>& progress) override {
    const double span = b - a;
    if (span == 0) return;
    const double dir = span > 0 ? 1.0 : -1.0;
    double t = a;
    double h = std::abs(h_desired_);
    if (!(h > 0)) h = initial_step(a, std::abs(span), stats);
    if (o_.max_step > 0) h = std::min(h, o_.max_step);
    const double p = order_;
    // The carried X and error keep the step matrices' zero lower-left block when they start
    // with one (a transition from the identity does); then their products go on the blocks.
    xsplit_ = std::min(zero_lower_left_split(X, split_), zero_lower_left_split(error, split_));
    long steps_here = 0, trials_here = 0;
    while (dir * (b - t) > 0) {
      const TrialStep trial = propose_step(h, std::abs(b - t), dir);
      const double hd = trial.signed_length;
      if (order_ == 6 && trial.last && h_validated_ && trial.size <= 0.5 * h && short_leg(t, hd, X, error, stats)) {
        t = b;
        ++stats.steps;
        ++steps_here;
        break;
      }
      // A trial step whose exponentials or product overflow (a step far too long for a stiff
      // generator: the truncated Omega is then no longer close to the true logarithm) is a
      // rejected step, retried shorter, never a failure by itself.
      bool finite = step(t, hd, full_, stats) && step(t, hd / 2, h1_, stats) &&
                    step(t + hd / 2, hd / 2, h2_, stats);
      double e = std::numeric_limits<double>::infinity();
      if (finite) {
        block_product_into(half_, h2_, h1_, split_);
        diff_ = half_ - full_;
        block_product_into(xnew_, half_, X, xsplit_);
        block_product_into(err_, diff_, X, xsplit_);
        err_ /= (std::pow(2.0, p) - 1.0);
        finite = xnew_.allFinite() && err_.allFinite();
        if (finite) e = weighted_rms(err_, xnew_, o_);
        if (!std::isfinite(e)) finite = false;
      }
      last_trial_finite_ = finite;
      const double factor = controller_.next_factor(e, trial.size >= h);
      if (e <= 1.0) {
        h_validated_ = true;
        block_product_into(diff_, half_, error, xsplit_);
        error = diff_ + err_;
        X.swap(xnew_);
        accept_step(trial, b, factor, t, h, steps_here, stats, progress);
      } else {
        ++stats.rejected_steps;
        h = trial.size * factor;
      }
      if (o_.max_step > 0) h = std::min(h, o_.max_step);
      check_step_progress(g_, o_, t, b, h, ++trials_here, last_trial_finite_);
    }
    h_desired_ = h;
    if (progress) progress(b);
  }

 private:
  double initial_step(double a, double span, PropagationStats& stats) {
    if (o_.initial_step > 0) return std::min(o_.initial_step, span);
    g_.eval(a, a1_);
    ++stats.evaluations;
    double nrm = norm_inf(a1_);
    if (!std::isfinite(nrm))
      throw NumericalError(with_diagnosis(g_, a, span >= 0 ? 1.0 : -1.0, g_.label + " is not finite at t = " + format_number(a)));
    double h = nrm > 0 ? 0.5 * std::pow(o_.rtol, 1.0 / (order_ + 1)) / nrm : span;
    return std::min(h, span);
  }

  /// A leg much shorter than the step the controller has accepted (an output grid finer than
  /// the natural step): one step, checked by the embedded fourth-order Omega from the same
  /// nodes instead of step doubling, three times cheaper. Its local error is below
  /// (1/2)^7 of an accepted step's; the embedded estimate overstates it, which is safe. When
  /// even that estimate fails the tolerance, returns false and the caller steps as usual.
  bool short_leg(double t, double hd, Eigen::MatrixXd& X, Eigen::MatrixXd& error, PropagationStats& stats) {
    embedded_ = true;
    const bool finite = step(t, hd, half_, stats);
    embedded_ = false;
    if (!finite) return false;
    block_product_into(xnew_, half_, X, xsplit_);
    // exp(Omega6) - exp(Omega4) ~ (Omega6 - Omega4) exp(Omega6)
    block_product_into(err_, delta_, xnew_, xsplit_);
    if (!xnew_.allFinite() || !err_.allFinite()) return false;
    if (!(weighted_rms(err_, xnew_, o_) <= 1.0)) return false;
    block_product_into(diff_, half_, error, xsplit_);
    error = diff_ + err_;
    X.swap(xnew_);
    return true;
  }

  /// Throws when G itself is not finite at a node: that is the model's failure, which no
  /// shorter step can cure.
  void require_finite_generator(const Eigen::MatrixXd& m, double t, double h) const {
    if (!m.allFinite())
      throw NumericalError(with_diagnosis(g_, t, h >= 0 ? 1.0 : -1.0,
                                          g_.label + " is not finite at t = " + format_number(t)));
  }

  /// S = exp(Omega) for the step from t of signed length h. Returns false when Omega or S
  /// overflows (the caller rejects the step).
  bool step(double t, double h, Eigen::MatrixXd& S, PropagationStats& stats) {
    if (order_ == 4) {
      const double d = std::sqrt(3.0) / 6.0;
      g_.eval(t + (0.5 - d) * h, a1_);
      g_.eval(t + (0.5 + d) * h, a2_);
      stats.evaluations += 2;
      require_finite_generator(a1_, t + (0.5 - d) * h, h);
      require_finite_generator(a2_, t + (0.5 + d) * h, h);
      // Omega = h/2 (A1 + A2) + sqrt(3) h^2 / 12 [A2, A1]
      omega_ = (0.5 * h) * (a1_ + a2_);
      van_loan_commutator_into(c1_, a2_, a1_, split_, work_);
      omega_ += (std::sqrt(3.0) * h * h / 12.0) * c1_;
    } else {
      const double d = std::sqrt(15.0) / 10.0;
      g_.eval(t + (0.5 - d) * h, a1_);
      g_.eval(t + 0.5 * h, a2_);
      g_.eval(t + (0.5 + d) * h, a3_);
      stats.evaluations += 3;
      require_finite_generator(a1_, t + (0.5 - d) * h, h);
      require_finite_generator(a2_, t + 0.5 * h, h);
      require_finite_generator(a3_, t + (0.5 + d) * h, h);
      // alpha1 = h A2, alpha2 = sqrt(15) h / 3 (A3 - A1), alpha3 = 10 h / 3 (A3 - 2 A2 + A1)
      // C1 = [alpha1, alpha2], C2 = -1/60 [alpha1, 2 alpha3 + C1]
      // Omega = alpha1 + alpha3 / 12 + 1/240 [-20 alpha1 - alpha3 + C1, alpha2 + C2]
      Eigen::MatrixXd& al1 = t1_;
      Eigen::MatrixXd& al2 = t2_;
      al1 = h * a2_;
      al2 = (std::sqrt(15.0) * h / 3.0) * (a3_ - a1_);
      a3_ = (10.0 * h / 3.0) * (a3_ - 2.0 * a2_ + a1_);  // alpha3, reusing A3's storage
      van_loan_commutator_into(c1_, al1, al2, split_, work_);
      a1_ = 2.0 * a3_ + c1_;  // 2 alpha3 + C1
      van_loan_commutator_into(c2_, al1, a1_, split_, work_);
      c2_ *= -1.0 / 60.0;
      a1_ = -20.0 * al1 - a3_ + c1_;  // left factor
      a2_ = al2 + c2_;                // right factor
      omega_ = al1 + a3_ / 12.0;
      if (embedded_) delta_ = omega_ - c1_ / 12.0;  // Omega4 = alpha1 + alpha3/12 - C1/12
      van_loan_commutator_into(c2_, a1_, a2_, split_, work_);  // C2 is in a2_ now
      omega_ += (1.0 / 240.0) * c2_;
      if (embedded_) delta_ = omega_ - delta_;      // Omega6 - Omega4
    }
    if (!omega_.allFinite()) return false;
    expm_.compute(omega_, S);
    return S.allFinite();
  }

  Generator g_;
  PropagationOptions o_;
  int order_;
  Eigen::Index split_;       // G's Van Loan half (Generator::van_loan_half), 0 for a general G
  Eigen::Index xsplit_ = 0;  // split_ when this leg's X and error are block upper triangular
  StepController controller_;  // the doubling estimate goes like h^(order + 1)
  Eigen::MatrixXd work_;     // split_ x split_ scratch of the commutators
  double h_desired_ = 0;
  bool h_validated_ = false;  // a step of about h_desired_ has passed the error test
  bool embedded_ = false;     // step() also forms delta_ = Omega6 - Omega4
  bool last_trial_finite_ = true;  // the last full trial step was finite
  Eigen::MatrixXd delta_, a1_, a2_, a3_, omega_, c1_, c2_, t1_, t2_, full_, h1_, h2_, half_, diff_, xnew_, err_;
  MatrixExponential expm_;
};

}  // namespace

std::unique_ptr<StepperBase> make_magnus_stepper(const Generator& g, const PropagationOptions& o,
                                                 int order) {
  return std::make_unique<MagnusStepper>(g, o, order);
}

}  // namespace ordex
