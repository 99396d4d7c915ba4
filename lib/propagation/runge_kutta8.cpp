// Explicit Runge-Kutta of order 8 with the embedded 5th- and 3rd-order error estimators of
// Dormand & Prince (the 8(5,3) pair: Hairer, Norsett & Wanner, Solving Ordinary Differential
// Equations I, 2nd ed., Springer 1993, Sec. II.10; the coefficient table below is the one
// distributed with scipy.integrate, written out to 17 digits).
//
// Each step builds the step's own transition matrix S = Phi(t + h, t) from the identity, so
// the first stage is A(t) itself (no product) and eleven products remain. Then X <- S X, the
// carried error <- S error + local error (the linearized global error, as the Magnus stepper
// carries it), and the local error E5 X, scaled by Hairer's combination with the 3rd-order
// estimate so that it behaves like the 8th-order error it stands for. Fourteen n x n products
// per step in all; on smooth plants its steps are long (order 8), and nothing is inverted.
// The last stage's node is t + h, the next step's first: eleven evaluations of A per step
// (and per retried trial, whose A(t) is kept), where a plant's A(t) is often the larger cost.
#include <algorithm>
#include <array>
#include <cmath>
#include <limits>

#include "io/errors.hpp"
#include "propagation/block_algebra.hpp"
#include "propagation/stepper.hpp"

namespace ordex {
namespace {

const double kC[12] = {0.0, 0.05260015195876773, 0.0789002279381516, 0.1183503419072274, 0.2816496580927726, 0.3333333333333333, 0.25, 0.3076923076923077, 0.6512820512820513, 0.6, 0.8571428571428571, 1.0};
const double kA[12][12] = {
    {0.0},
    {0.05260015195876773},
    {0.0197250569845379, 0.0591751709536137},
    {0.02958758547680685, 0.0, 0.08876275643042054},
    {0.2413651341592667, 0.0, -0.8845494793282861, 0.924834003261792},
    {0.037037037037037035, 0.0, 0.0, 0.17082860872947386, 0.12546768756682242},
    {0.037109375, 0.0, 0.0, 0.17025221101954405, 0.06021653898045596, -0.017578125},
    {0.03709200011850479, 0.0, 0.0, 0.17038392571223998, 0.10726203044637328, -0.015319437748624402, 0.008273789163814023},
    {0.6241109587160757, 0.0, 0.0, -3.3608926294469414, -0.868219346841726, 27.59209969944671, 20.154067550477894, -43.48988418106996},
    {0.47766253643826434, 0.0, 0.0, -2.4881146199716677, -0.590290826836843, 21.230051448181193, 15.279233632882423, -33.28821096898486, -0.020331201708508627},
    {-0.9371424300859873, 0.0, 0.0, 5.186372428844064, 1.0914373489967295, -8.149787010746927, -18.52006565999696, 22.739487099350505, 2.4936055526796523, -3.0467644718982196},
    {2.273310147516538, 0.0, 0.0, -10.53449546673725, -2.0008720582248625, -17.9589318631188, 27.94888452941996, -2.8589982771350235, -8.87285693353063, 12.360567175794303, 0.6433927460157636},
};
const double kB[12] = {0.054293734116568765, 0.0, 0.0, 0.0, 0.0, 4.450312892752409, 1.8915178993145003, -5.801203960010585, 0.3111643669578199, -0.1521609496625161, 0.20136540080403034, 0.04471061572777259};
const double kE5[12] = {0.01312004499419488, 0.0, 0.0, 0.0, 0.0, -1.2251564463762044, -0.4957589496572502, 1.6643771824549864, -0.35032884874997366, 0.3341791187130175, 0.08192320648511571, -0.022355307863886294};
const double kE3[12] = {-0.18980075407240762, 0.0, 0.0, 0.0, 0.0, 4.450312892752409, 1.8915178993145003, -5.801203960010585, -0.4226823213237919, -0.1521609496625161, 0.20136540080403034, 0.02265179219836082};

constexpr int kStages = 12;

// N is the state dimension when fixed at compile time (small plants, where dynamic-size
// bookkeeping would cost more than the arithmetic), Eigen::Dynamic otherwise.
template <int N>
class RungeKutta8Stepper : public StepperBase {
  using Mat = Eigen::Matrix<double, N, N>;

 public:
  RungeKutta8Stepper(const Generator& g, const PropagationOptions& o)
      : g_(g), o_(o), split_(van_loan_split(g)) {
    const int n = g.dim;
    for (auto& k : k_) k.resize(n, n);
    for (auto* m : {&y_, &ai_, &a0_, &a_end_, &s_, &e5_, &xnew_, &err_, &carry_, &x_, &error_}) m->resize(n, n);
  }

  void advance(double a, double b, Eigen::MatrixXd& X, Eigen::MatrixXd& error, PropagationStats& stats,
               const std::function<void(double)>& progress) override {
    if (b == a) return;
    x_ = X;
    error_ = error;
    have_a0_ = false;  // a leg may start at a breakpoint, where A jumps: evaluate afresh
    // Stage values and S keep G's zero lower-left block; so do X and error when they start
    // with one (a transition from the identity does), and then their products go on blocks.
    xsplit_ = std::min(zero_lower_left_split(x_, split_), zero_lower_left_split(error_, split_));
    advance_leg(a, b, stats, progress);
    X = x_;
    error = error_;
  }

 private:
  void advance_leg(double a, double b, PropagationStats& stats, const std::function<void(double)>& progress) {
    Mat& X = x_;
    Mat& error = error_;
    const double span = b - a;
    const double dir = span > 0 ? 1.0 : -1.0;
    double t = a;
    double h = std::abs(h_desired_);
    if (!(h > 0)) h = initial_step(a, std::abs(span), stats);
    if (o_.max_step > 0) h = std::min(h, o_.max_step);
    long steps_here = 0, trials_here = 0;
    bool last_trial_finite = true;
    while (dir * (b - t) > 0) {
      const TrialStep trial = propose_step(h, std::abs(b - t), dir);
      const double hd = trial.signed_length;
      double e = std::numeric_limits<double>::infinity();
      // The last stage sits on the step's end. On a leg's last step that is the leg's end,
      // often a breakpoint where A jumps: take A from this leg's side of it, a rounding away.
      const double last_node = trial.last ? std::nextafter(b, a) : t + hd;
      bool finite = step(t, hd, last_node, stats);
      if (finite) {
        block_product_into(xnew_, s_, X, xsplit_);
        block_product_into(err_, e5_, X, xsplit_);
        err_ *= e5_scale_;
        finite = xnew_.allFinite() && err_.allFinite();
        if (finite) e = weighted_rms(err_, xnew_, o_);
        if (!std::isfinite(e)) finite = false;
      }
      last_trial_finite = finite;
      // Rejected trials cost eleven evaluations of A for nothing: the controller's integral
      // term keeps them rarer (on the 50-period Mathieu run 17 % of the trials with the plain
      // law, 7 % with it; docs/performance.md). The estimate goes like h^8.
      const double factor = controller_.next_factor(e, trial.size >= h);
      if (e <= 1.0) {
        block_product_into(carry_, s_, error, xsplit_);
        error = carry_ + err_;
        X.swap(xnew_);
        const double t_end = t + hd;
        accept_step(trial, b, factor, t, h, steps_here, stats, progress);
        // The last stage was A(t + h): the next step's first stage when it starts there.
        if (!trial.last && t == t_end) {
          a0_.swap(a_end_);
          t_a0_ = t;
        } else {
          have_a0_ = false;
        }
      } else {
        ++stats.rejected_steps;
        h = trial.size * factor;
      }
      if (o_.max_step > 0) h = std::min(h, o_.max_step);
      check_step_progress(g_, o_, t, b, h, ++trials_here, last_trial_finite);
    }
    h_desired_ = h;
    if (progress) progress(b);
  }

  double initial_step(double a, double span, PropagationStats& stats) {
    if (o_.initial_step > 0) return std::min(o_.initial_step, span);
    g_.eval(a, a0_);
    ++stats.evaluations;
    t_a0_ = a;
    have_a0_ = a0_.allFinite();
    const double nrm = norm_inf(a0_);
    if (!std::isfinite(nrm))
      throw NumericalError(with_diagnosis(g_, a, span >= 0 ? 1.0 : -1.0, g_.label + " is not finite at t = " + format_number(a)));
    const double h = nrm > 0 ? 0.5 * std::pow(o_.rtol, 1.0 / 9.0) / nrm : span;
    return std::min(h, span);
  }

  void eval_checked(double t, double h, PropagationStats& stats) {
    g_.eval(t, ai_);
    ++stats.evaluations;
    if (!ai_.allFinite())
      throw NumericalError(with_diagnosis(g_, t, h >= 0 ? 1.0 : -1.0, g_.label + " is not finite at t = " + format_number(t)));
  }

  /// S = Phi(t + h, t) into s_, its 5th-order error matrix into e5_ and the factor e5_scale_
  /// that turns it into the combined estimate; the last stage evaluates A at LAST_NODE (t + h,
  /// or just inside a leg's end). False when a stage overflows.
  bool step(double t, double h, double last_node, PropagationStats& stats) {
    if (!(have_a0_ && t_a0_ == t)) {  // else A(t) is kept from the last accepted or rejected trial
      eval_checked(t, h, stats);
      a0_ = ai_;
      t_a0_ = t;
      have_a0_ = true;
    }
    k_[0] = a0_;  // A(t) I
    for (int i = 1; i < kStages; ++i) {
      y_.setIdentity();
      for (int j = 0; j < i; ++j)
        if (kA[i][j] != 0) y_ += (h * kA[i][j]) * k_[j];
      eval_checked(i + 1 < kStages ? t + kC[i] * h : last_node, h, stats);
      block_product_into(k_[i], ai_, y_, split_);
    }
    a_end_ = ai_;  // kC[11] = 1: A at the step's end
    s_.setIdentity();
    e5_.setZero();
    double e3_sq = 0;
    y_.setZero();  // the 3rd-order estimate, for its norm only
    for (int i = 0; i < kStages; ++i) {
      if (kB[i] != 0) s_ += (h * kB[i]) * k_[i];
      if (kE5[i] != 0) e5_ += (h * kE5[i]) * k_[i];
      if (kE3[i] != 0) y_ += (h * kE3[i]) * k_[i];
    }
    if (!s_.allFinite() || !e5_.allFinite() || !y_.allFinite()) return false;
    // Hairer's combination err5^2 / sqrt(err5^2 + 0.01 err3^2), with the ratio of the two
    // estimators taken on the step map (their ratio on S X differs only by X's mixing).
    const double e5_sq = e5_.squaredNorm();
    e3_sq = y_.squaredNorm();
    e5_scale_ = e5_sq > 0 ? std::sqrt(e5_sq / (e5_sq + 0.01 * e3_sq)) : 1.0;
    return true;
  }

  Generator g_;
  PropagationOptions o_;
  Eigen::Index split_;       // G's Van Loan half (Generator::van_loan_half), 0 for a general G
  Eigen::Index xsplit_ = 0;  // split_ when this leg's X and error are block upper triangular
  double h_desired_ = 0;
  StepController controller_{8.0, 1.0 / 3.0, 6.0};  // DOP853's limits: at most 3x shorter, 6x longer
  bool have_a0_ = false;  // a0_ holds A(t_a0_)
  double t_a0_ = 0;
  double e5_scale_ = 1;
  std::array<Mat, kStages> k_;
  Mat y_, ai_, a0_, a_end_, s_, e5_, xnew_, err_, carry_, x_, error_;
};

}  // namespace

std::unique_ptr<StepperBase> make_runge_kutta8_stepper(const Generator& g, const PropagationOptions& o) {
  switch (g.dim) {
    case 1: return std::make_unique<RungeKutta8Stepper<1>>(g, o);
    case 2: return std::make_unique<RungeKutta8Stepper<2>>(g, o);
    case 3: return std::make_unique<RungeKutta8Stepper<3>>(g, o);
    case 4: return std::make_unique<RungeKutta8Stepper<4>>(g, o);
    case 6: return std::make_unique<RungeKutta8Stepper<6>>(g, o);
    default: return std::make_unique<RungeKutta8Stepper<Eigen::Dynamic>>(g, o);
  }
}

}  // namespace ordex
