#include "propagation/propagator.hpp"

#include <algorithm>
#include <cmath>
#include <exception>
#include <thread>

#include "io/errors.hpp"
#include "propagation/stepper.hpp"

namespace ordex {

Method resolve_auto_method() {
  // Magnus order 6 stays the default. The order-8 Runge-Kutta (Method::Rk8) is faster at
  // matched accuracy on smooth and lightly damped plants (docs/performance.md, issue 9), but at
  // equal tolerances its global error is far larger: on the 40-state flexible stack at rtol
  // 1e-8, 3.9e-6 against magnus6's 1.1e-8 (both estimates honest). A default whose rtol means
  // what the user expects wins over speed; rk8 is one option away. Magnus also keeps Phi's
  // exponential structure (exact for commuting and constant generators, stable when stiff).
  return Method::Magnus6;
}

Propagator::Propagator(Generator generator, PropagationOptions options)
    : generator_(std::move(generator)), options_(std::move(options)) {
  options_.validate();
  if (generator_.dim < 1 || !generator_.eval)
    throw InputError(generator_.label + ": the generator is empty");
  for (double bp : generator_.breakpoints)
    if (!std::isfinite(bp)) throw InputError(generator_.label + ": a breakpoint is not finite");
  std::sort(generator_.breakpoints.begin(), generator_.breakpoints.end());
  Method m = options_.method;
  if (m == Method::Auto) m = resolve_auto_method();
  stats_.method = m;
  switch (m) {
    case Method::Magnus4: stepper_ = make_magnus_stepper(generator_, options_, 4); break;
    case Method::Magnus6: stepper_ = make_magnus_stepper(generator_, options_, 6); break;
    case Method::Adams: stepper_ = make_cvode_stepper(generator_, options_, false); break;
    case Method::Bdf: stepper_ = make_cvode_stepper(generator_, options_, true); break;
    case Method::Rk8: stepper_ = make_runge_kutta8_stepper(generator_, options_); break;
    case Method::Auto: break;
  }
}

Propagator::~Propagator() = default;
Propagator::Propagator(Propagator&&) noexcept = default;
Propagator& Propagator::operator=(Propagator&&) noexcept = default;

namespace {

void require_finite(double t, const std::string& what) {
  if (!std::isfinite(t)) throw InputError(what + ": time is not finite");
}

}  // namespace

void Propagator::advance(double a, double b, Eigen::MatrixXd& X, Eigen::MatrixXd& error) {
  // Legs between breakpoints; the progress fraction runs over [a, b].
  std::function<void(double)> progress;
  if (options_.progress && a != b) {
    auto cb = options_.progress;
    progress = [cb, a, b](double t) { cb(std::min(1.0, std::abs(t - a) / std::abs(b - a))); };
  }
  const double dir = b >= a ? 1.0 : -1.0;
  double t = a;
  std::vector<double> stops;
  for (double bp : generator_.breakpoints)
    if (dir * (bp - a) > 0 && dir * (b - bp) > 0) stops.push_back(bp);
  if (dir < 0) std::reverse(stops.begin(), stops.end());
  stops.push_back(b);
  for (double s : stops) {
    stepper_->advance(t, s, X, error, stats_, progress);
    t = s;
  }
}

void Propagator::advance_from_identity(double a, double b, Eigen::MatrixXd& X, Eigen::MatrixXd& error) {
  const int n = generator_.dim;
  X.setIdentity(n, n);
  error.setZero(n, n);
  const int pieces = options_.threads;
  if (pieces < 2 || !generator_.fork || a == b) {
    advance(a, b, X, error);
    return;
  }
  while (static_cast<int>(helpers_.size()) < pieces - 1) {
    Generator g = generator_.fork();
    Generator h = generator_;
    h.eval = std::move(g.eval);
    h.diagnose = std::move(g.diagnose);
    h.fork = nullptr;
    PropagationOptions o = options_;
    o.threads = 1;
    o.progress = nullptr;
    helpers_.emplace_back(std::move(h), o);
  }
  std::vector<double> cut(pieces + 1);
  for (int k = 0; k <= pieces; ++k) cut[k] = a + (b - a) * static_cast<double>(k) / pieces;
  cut[pieces] = b;
  std::vector<Eigen::MatrixXd> xs(pieces, Eigen::MatrixXd::Identity(n, n));
  std::vector<Eigen::MatrixXd> es(pieces, Eigen::MatrixXd::Zero(n, n));
  std::vector<std::exception_ptr> failed(pieces);
  std::vector<PropagationStats> before(pieces - 1);
  std::vector<std::thread> workers;
  for (int k = 1; k < pieces; ++k) {
    Propagator& helper = helpers_[k - 1];
    before[k - 1] = helper.stats_;
    workers.emplace_back([&, k] {
      try {
        helper.advance(cut[k], cut[k + 1], xs[k], es[k]);
      } catch (...) {
        failed[k] = std::current_exception();
      }
    });
  }
  try {
    advance(cut[0], cut[1], xs[0], es[0]);  // the first piece here: its progress stands for all
  } catch (...) {
    failed[0] = std::current_exception();
  }
  for (auto& w : workers) w.join();
  for (int k = 1; k < pieces; ++k) {
    const PropagationStats& now = helpers_[k - 1].stats_;
    stats_.steps += now.steps - before[k - 1].steps;
    stats_.rejected_steps += now.rejected_steps - before[k - 1].rejected_steps;
    stats_.evaluations += now.evaluations - before[k - 1].evaluations;
  }
  for (auto& f : failed)  // the earliest piece's failure is the one the user would meet first
    if (f) std::rethrow_exception(f);
  // (X_k + E_k) (X + E) ~ X_k X + (X_k E + E_k X): the first-order error of the product.
  X.swap(xs[0]);
  error.swap(es[0]);
  Eigen::MatrixXd t1, t2;
  for (int k = 1; k < pieces; ++k) {
    t1.noalias() = xs[k] * error;
    t1.noalias() += es[k] * X;
    t2.noalias() = xs[k] * X;
    error.swap(t1);
    X.swap(t2);
  }
}

namespace {

// X^k by repeated squaring, carrying the first-order error: (X + E)(Y + F) ~ XY + (X F + E Y).
void power_with_error(const Eigen::MatrixXd& M, const Eigen::MatrixXd& EM, long k, Eigen::MatrixXd& P,
                      Eigen::MatrixXd& EP) {
  const Eigen::Index n = M.rows();
  P.setIdentity(n, n);
  EP.setZero(n, n);
  Eigen::MatrixXd base = M, ebase = EM, t1, t2;
  while (k > 0) {
    if (k & 1) {
      t1.noalias() = P * ebase;
      t1.noalias() += EP * base;
      t2.noalias() = P * base;
      P.swap(t2);
      EP.swap(t1);
    }
    k >>= 1;
    if (k > 0) {
      t1.noalias() = base * ebase;
      t1.noalias() += ebase * base;
      t2.noalias() = base * base;
      base.swap(t2);
      ebase.swap(t1);
    }
  }
}

}  // namespace

Eigen::MatrixXd Propagator::transition(double t0, double t1) {
  require_finite(t0, "t0");
  require_finite(t1, "t1");
  const int n = generator_.dim;
  Eigen::MatrixXd X = Eigen::MatrixXd::Identity(n, n);
  Eigen::MatrixXd error = Eigen::MatrixXd::Zero(n, n);
  const double span = std::abs(t1 - t0);
  if (options_.use_period && generator_.period && *generator_.period > 0 &&
      span >= 2 * *generator_.period) {
    // Floquet: Phi(t0 + kT + r, t0) = Phi(t0 + r, t0) M^k, as A repeats with period T.
    const double T = *generator_.period, dir = t1 > t0 ? 1.0 : -1.0;
    // The period count is converted to an integer only once it is known to fit (2^53: every
    // count below is exact in a double, and M^k takes at most 53 squarings).
    const double periods = std::floor(span / T);
    if (!(periods <= 9007199254740992.0))
      throw NumericalError(generator_.label + ": the window from t = " + format_number(t0) + " to " +
                           format_number(t1) + " spans " + format_number(periods) +
                           " periods, more than 2^53 (the largest exact period count)");
    const long k = static_cast<long>(periods);
    advance_from_identity(t0, t0 + dir * T, X, error);
    Eigen::MatrixXd Mk, EMk;
    power_with_error(X, error, k, Mk, EMk);
    const double rest = t1 - (t0 + dir * static_cast<double>(k) * T);
    Eigen::MatrixXd R = Eigen::MatrixXd::Identity(n, n), ER = Eigen::MatrixXd::Zero(n, n);
    if (dir * rest > 0) advance(t0, t0 + rest, R, ER);
    X.noalias() = R * Mk;
    error.noalias() = ER * Mk;
    error.noalias() += R * EMk;
    if (!X.allFinite())
      throw NumericalError(generator_.label + ": transition matrix is not finite over " +
                           std::to_string(k) + " periods");
  } else {
    advance_from_identity(t0, t1, X, error);
  }
  stats_.error_estimate = error.cwiseAbs().maxCoeff();
  return X;
}

std::vector<Eigen::MatrixXd> Propagator::transition_on_grid(double t0, const std::vector<double>& times) {
  std::vector<Eigen::MatrixXd> out;
  out.reserve(times.size());
  transition_on_grid(t0, times, [&](std::size_t, const Eigen::MatrixXd& phi) { out.push_back(phi); });
  return out;
}

void Propagator::transition_on_grid(double t0, const std::vector<double>& times,
                                    const std::function<void(std::size_t, const Eigen::MatrixXd&)>& visit) {
  require_finite(t0, "t0");
  if (times.empty()) return;
  if (times.size() == 1) {  // one output time: the whole-window path (uses the period)
    visit(0, transition(t0, times[0]));
    return;
  }
  double dir = 0;
  for (std::size_t k = 0; k < times.size(); ++k) {
    require_finite(times[k], "output grid");
    double prev = k ? times[k - 1] : t0;
    double d = times[k] - prev;
    if (d != 0) {
      double s = d > 0 ? 1.0 : -1.0;
      if (dir != 0 && s != dir)
        throw InputError("output grid: times must be monotone and on one side of t0");
      dir = s;
    }
  }
  Eigen::MatrixXd X = Eigen::MatrixXd::Identity(generator_.dim, generator_.dim);
  Eigen::MatrixXd error = Eigen::MatrixXd::Zero(generator_.dim, generator_.dim);
  double prev = t0;
  // Progress over the whole grid rather than each leg.
  auto user_progress = options_.progress;
  const double span = std::abs(times.back() - t0);
  for (std::size_t k = 0; k < times.size(); ++k) {
    const double tk = times[k];
    if (user_progress && span > 0) {
      double start = prev;
      options_.progress = [user_progress, start, tk, t0, span](double f) {
        user_progress(std::min(1.0, (std::abs(start - t0) + f * std::abs(tk - start)) / span));
      };
    }
    advance(prev, tk, X, error);
    stats_.error_estimate = error.cwiseAbs().maxCoeff();
    visit(k, X);
    prev = tk;
  }
  options_.progress = user_progress;
}

std::vector<Eigen::MatrixXd> Propagator::interval_maps(const std::vector<double>& times) {
  std::vector<Eigen::MatrixXd> out;
  if (times.size() >= 2) out.reserve(times.size() - 1);
  for_each_interval(times, [&](std::size_t, const Eigen::MatrixXd& S) { out.push_back(S); });
  return out;
}

void Propagator::for_each_interval(const std::vector<double>& times,
                                   const std::function<void(std::size_t, const Eigen::MatrixXd&)>& visit) {
  if (times.size() < 2) return;
  const double dir = times[1] > times[0] ? 1.0 : -1.0;
  for (std::size_t k = 0; k + 1 < times.size(); ++k) {
    require_finite(times[k + 1], "interval grid");
    if (!(dir * (times[k + 1] - times[k]) > 0))
      throw InputError("interval grid: times must be strictly monotone");
  }
  auto user_progress = options_.progress;
  options_.progress = nullptr;
  double worst = 0;
  Eigen::MatrixXd X(generator_.dim, generator_.dim), error(generator_.dim, generator_.dim);
  const double span = std::abs(times.back() - times.front());
  for (std::size_t k = 0; k + 1 < times.size(); ++k) {
    X.setIdentity();
    error.setZero();
    advance(times[k], times[k + 1], X, error);
    worst = std::max(worst, error.cwiseAbs().maxCoeff());
    visit(k, X);
    if (user_progress && ((k & 255) == 0 || k + 2 == times.size()))
      user_progress(std::abs(times[k + 1] - times.front()) / span);
  }
  options_.progress = user_progress;
  stats_.error_estimate = worst;
}

}  // namespace ordex
