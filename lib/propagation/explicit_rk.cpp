#include "propagation/explicit_rk.hpp"

#include <algorithm>
#include <boost/numeric/odeint.hpp>
#include <cmath>
#include <limits>

#include "io/errors.hpp"

namespace ordex {

namespace odeint = boost::numeric::odeint;
using State = std::vector<double>;

struct ExplicitRk::Impl {
  OdeProblem problem;
  OdeOptions options;
  State y;
  double t = 0, dt = 0;  // dt: the controller's last proposal (signed), 0 before the first step
  bool started = false;
  OdeStats st;
  // The current leg and whether its ends are breakpoints (as OdeIntegrator: a coefficient asked
  // at a breakpoint comes from the side being integrated).
  double leg_from = 0, leg_to = 0, nudge = 0;
  bool from_breakpoint = false, to_breakpoint = false;

  bool is_breakpoint(double s) const {
    return std::binary_search(problem.breakpoints.begin(), problem.breakpoints.end(), s);
  }
  double inside(double s) const {
    const double dir = leg_to >= leg_from ? 1.0 : -1.0;
    if (from_breakpoint && std::abs(s - leg_from) <= nudge) return leg_from + dir * nudge;
    if (to_breakpoint && std::abs(s - leg_to) <= nudge) return leg_to - dir * nudge;
    return s;
  }
  std::string name_of(std::size_t i) const {
    return problem.name_of ? problem.name_of(static_cast<int>(i)) : "y[" + std::to_string(i) + "]";
  }

  void leg(double to) {
    leg_from = t;
    leg_to = to;
    nudge = 1e-10 * std::abs(to - t);
    from_breakpoint = is_breakpoint(t);
    to_breakpoint = is_breakpoint(to);
    const double dir = to > t ? 1.0 : -1.0;
    auto rhs = [this](const State& x, State& dxdt, double s) {
      ++st.rhs_evaluations;
      problem.rhs(inside(s), x.data(), dxdt.data());
    };
    // Odeint's controller: error_i / (atol + rtol (|y_i| + |dt y'_i|)) at most 1 in the max norm.
    auto stepper = odeint::make_controlled(options.atol, options.rtol, odeint::runge_kutta_fehlberg78<State>());
    const double span = std::abs(to - t);
    if (dt == 0 || dt * dir < 0)
      dt = dir * (options.initial_step > 0 ? options.initial_step : std::min(span, 1e-3 * std::max(span, 1e-300)));
    long tries = 0;
    while (dir * (to - t) > 0) {
      double h = dt;
      if (options.max_step > 0 && std::abs(h) > options.max_step) h = dir * options.max_step;
      const bool last = dir * (t + h - to) >= 0;
      if (last) h = to - t;
      const double before = t;
      if (stepper.try_step(rhs, y, t, h) == odeint::success) {
        ++st.steps;
        if (last) t = to;  // exactly, whatever rounding the step's sum left
        for (std::size_t i = 0; i < y.size(); ++i)
          if (!std::isfinite(y[i]))
            throw NumericalError(problem.label + ": " + name_of(i) + " is not finite at t = " + format_number(t));
        // Keep the controller's proposal unless this step was cut short to land on TO.
        if (!last || std::abs(h) > std::abs(dt)) dt = h;
      } else {
        ++st.error_test_failures;
        dt = h;
        if (!(std::abs(h) > 16 * std::numeric_limits<double>::epsilon() * std::max(1.0, std::abs(before))))
          throw NumericalError(problem.label + ": step size underflow at t = " + format_number(before));
      }
      if (++tries > options.max_steps)
        throw NumericalError(problem.label + ": more than OdeOptions::max_steps = " +
                             std::to_string(options.max_steps) + " steps before t = " + format_number(to) +
                             " (reached t = " + format_number(t) + ")");
    }
  }
};

ExplicitRk::ExplicitRk(OdeProblem problem, OdeOptions options) : impl_(std::make_unique<Impl>()) {
  impl_->problem = checked_problem(std::move(problem), options);
  impl_->options = options;
  impl_->y.resize(static_cast<std::size_t>(impl_->problem.size));
}

std::unique_ptr<OdeSolver> make_ode_solver(OdeProblem problem, OdeOptions options) {
  if (options.scheme == OdeScheme::RungeKutta) return std::make_unique<ExplicitRk>(std::move(problem), options);
  return std::make_unique<OdeIntegrator>(std::move(problem), options);
}

ExplicitRk::~ExplicitRk() = default;

void ExplicitRk::reset(double t0, const double* y0) {
  std::copy(y0, y0 + impl_->problem.size, impl_->y.begin());
  impl_->t = t0;
  impl_->started = true;  // the last step size is kept: a restart after an update needs no ramp
}

double ExplicitRk::time() const { return impl_->t; }

OdeStats ExplicitRk::stats() const { return impl_->st; }

void ExplicitRk::advance(double target, double* yout) {
  Impl& s = *impl_;
  if (!s.started) throw NumericalError(s.problem.label + ": advance before reset");
  const std::vector<double>& bps = s.problem.breakpoints;
  while (s.t != target) {
    const bool forward = target > s.t;
    double stop = target;
    if (forward) {
      auto it = std::upper_bound(bps.begin(), bps.end(), s.t);
      if (it != bps.end() && *it < target) stop = *it;
    } else {
      auto it = std::lower_bound(bps.begin(), bps.end(), s.t);
      if (it != bps.begin() && *(it - 1) > target) stop = *(it - 1);
    }
    s.leg(stop);
  }
  std::copy(s.y.begin(), s.y.end(), yout);
}

}  // namespace ordex
