#include "propagation/state_simulator.hpp"

#include <algorithm>
#include <cmath>
#include <memory>

#include "io/errors.hpp"

namespace ordex {

LinearPlant linear_plant(const System& sys, double t0, double t1) {
  LinearPlant p;
  p.states = sys.states();
  p.inputs = sys.inputs();
  const System* s = &sys;
  p.A = [s](double t, MatrixRef a) { s->A(t, a); };
  if (p.inputs > 0) p.B = [s](double t, MatrixRef b) { s->B(t, b); };
  p.breakpoints = sys.breakpoints_between(t0, t1);  // with the switching times in the window
  p.state_names = sys.info().state_names;
  return p;
}

void SampledInput::value(double t, Eigen::Ref<Eigen::VectorXd> u) const {
  const std::size_t count = times.size();
  if (count == 1 || t <= times.front()) {
    u = values.row(0).transpose();
    return;
  }
  if (t >= times.back()) {
    u = values.row(static_cast<Eigen::Index>(count - 1)).transpose();
    return;
  }
  // The sample interval [times[k], times[k+1]) that holds t.
  const std::size_t k = static_cast<std::size_t>(std::upper_bound(times.begin(), times.end(), t) - times.begin()) - 1;
  const Eigen::Index r = static_cast<Eigen::Index>(k);
  if (interpolation == SampleInterpolation::ZeroOrderHold) {
    u = values.row(r).transpose();
    return;
  }
  const double f = (t - times[k]) / (times[k + 1] - times[k]);
  u = (1.0 - f) * values.row(r).transpose() + f * values.row(r + 1).transpose();
}

void SampledInput::validate(int inputs) const {
  if (times.empty()) return;
  if (values.rows() != static_cast<Eigen::Index>(times.size()) || values.cols() != inputs)
    throw InputError("SampledInput::values is " + std::to_string(values.rows()) + " x " +
                     std::to_string(values.cols()) + ", expected " + std::to_string(times.size()) + " x " +
                     std::to_string(inputs));
  for (std::size_t k = 0; k + 1 < times.size(); ++k)
    if (!(times[k + 1] > times[k]))
      throw InputError("SampledInput::times must be strictly increasing (at t = " + format_number(times[k + 1]) + ")");
  if (!values.allFinite()) throw InputError("SampledInput::values must be finite");
}

void StateSimulation::validate() const {
  if (plant.states < 1) throw InputError(plant.label + ": LinearPlant::states must be at least 1");
  if (plant.inputs < 0) throw InputError(plant.label + ": LinearPlant::inputs must be >= 0");
  if (!plant.A) throw InputError(plant.label + ": LinearPlant::A is not set");
  if (plant.inputs > 0 && !plant.B) throw InputError(plant.label + ": LinearPlant::B is not set");
  if (!plant.state_names.empty() && static_cast<int>(plant.state_names.size()) != plant.states)
    throw InputError(plant.label + ": LinearPlant::state_names has " + std::to_string(plant.state_names.size()) +
                     " names for " + std::to_string(plant.states) + " states");
  input.samples.validate(plant.inputs);
}

namespace {

/// The right-hand side's workspace and the input law in one place.
struct SimulationWork {
  const StateSimulation& sim;
  int n, m;
  bool cost;
  Eigen::MatrixXd A, B, K, Acl, M;
  Eigen::VectorXd x, u, dx;
  Eigen::PartialPivLU<Eigen::MatrixXd> lu;

  explicit SimulationWork(const StateSimulation& s)
      : sim(s), n(s.plant.states), m(s.plant.inputs), cost(static_cast<bool>(s.running_cost)),
        A(n, n), B(n, m), K(m, n), Acl(n, n), M(n, n), x(n), u(m), dx(n) {
    B.setZero();
    K.setZero();
    u.setZero();
  }

  bool feedback() const { return m > 0 && !sim.input.general && sim.input.gain; }

  /// u at (t, x); x must be in X.
  void input(double t) {
    if (m == 0) return;
    const InputLaw& law = sim.input;
    if (law.general) {
      law.general(t, x, u);
      return;
    }
    if (!law.samples.times.empty()) law.samples.value(t, u);
    else if (law.feedforward) law.feedforward(t, u);
    else u.setZero();
    if (law.gain) {
      law.gain(t, K);
      u.noalias() -= K * x;
    }
  }

  void rhs(double t, const double* y, double* ydot) {
    x = Eigen::Map<const Eigen::VectorXd>(y, n);
    input(t);
    sim.plant.A(t, A);
    dx.noalias() = A * x;
    if (m > 0) {
      sim.plant.B(t, B);
      dx.noalias() += B * u;
    }
    Eigen::Map<Eigen::VectorXd>(ydot, n) = dx;
    if (cost) ydot[n] = sim.running_cost(t, x, u);
  }

  /// A - B K at t (A alone without feedback): the Jacobian of the states.
  void jacobian(double t) {
    sim.plant.A(t, Acl);
    if (feedback()) {
      sim.plant.B(t, B);
      sim.input.gain(t, K);
      Acl.noalias() -= B * K;
    }
  }
};

/// One run at OPTIONS.
SimulationResult run_once(const StateSimulation& sim, double t0, const Eigen::VectorXd& x0,
                          const std::vector<double>& times, const OdeOptions& options) {
  const int n = sim.plant.states, m = sim.plant.inputs;
  auto w = std::make_shared<SimulationWork>(sim);
  const int size = n + (w->cost ? 1 : 0);
  OdeProblem p;
  p.size = size;
  p.label = sim.plant.label;
  p.breakpoints = sim.plant.breakpoints;
  p.breakpoints.insert(p.breakpoints.end(), sim.input.samples.times.begin(), sim.input.samples.times.end());
  // The run's ends too: CVODE stops on them instead of stepping past, so a plant defined only on
  // the window (a table with outside = "error") is never evaluated beyond it.
  p.breakpoints.push_back(t0);
  if (!times.empty()) p.breakpoints.push_back(times.back());
  p.rhs = [w](double t, const double* y, double* ydot) { w->rhs(t, y, ydot); };
  p.name_of = [w, n](int i) -> std::string {
    if (i == n) return "the running cost";
    if (!w->sim.plant.state_names.empty()) return w->sim.plant.state_names[static_cast<std::size_t>(i)];
    return "x[" + std::to_string(i) + "]";
  };
  // Newton's linear systems with BDF: the states' block I - gamma (A - B K) factored exactly;
  // a running cost depends on x but nothing depends on it, so its row is solved as identity
  // (an approximation GMRES corrects). A general input law leaves GMRES without help.
  if (options.scheme == OdeScheme::Bdf && !sim.input.general) {
    p.jac_times = [w, n, size](double t, const double* y, const double* v, double* jv) {
      w->jacobian(t);
      Eigen::Map<Eigen::VectorXd>(jv, n).noalias() = w->Acl * Eigen::Map<const Eigen::VectorXd>(v, n);
      if (size > n) {
        // d L / d x by a difference quotient along v (L need not be quadratic).
        const double eps = 1e-7;
        Eigen::Map<const Eigen::VectorXd> yv(y, n), vv(v, n);
        const double vn = vv.norm();
        if (vn == 0) {
          jv[n] = 0;
          return;
        }
        const double h = eps * std::max(1.0, yv.norm()) / vn;
        w->x = yv + h * vv;
        w->input(t);
        const double lp = w->sim.running_cost(t, w->x, w->u);
        w->x = yv;
        w->input(t);
        const double l0 = w->sim.running_cost(t, w->x, w->u);
        jv[n] = (lp - l0) / h;
      }
    };
    p.precond_setup = [w](double t, const double*, double gamma) {
      w->jacobian(t);
      w->M = -gamma * w->Acl;
      w->M.diagonal().array() += 1.0;
      w->lu.compute(w->M);
      // Recoverable for CVODE (it cuts the step): a singular block at this gamma.
      if (!(w->lu.rcond() > 1e-300)) throw SingularNewtonMatrix("singular Newton block");
    };
    p.precond_solve = [w, n, size](const double* r, double* z) {
      Eigen::Map<Eigen::VectorXd>(z, n) = w->lu.solve(Eigen::Map<const Eigen::VectorXd>(r, n));
      if (size > n) z[n] = r[n];
    };
  }
  OdeIntegrator ode(std::move(p), options);

  SimulationResult r;
  r.times = times;
  r.final_rtol = options.rtol;
  const Eigen::Index count = static_cast<Eigen::Index>(times.size());
  r.states.resize(count, n);
  r.inputs.resize(count, m);
  if (w->cost) r.cost.resize(count);
  std::vector<double> y(static_cast<std::size_t>(size), 0.0);
  Eigen::Map<Eigen::VectorXd>(y.data(), n) = x0;
  ode.reset(t0, y.data());
  for (Eigen::Index k = 0; k < count; ++k) {
    const double t = times[static_cast<std::size_t>(k)];
    if (t != t0) ode.advance(t, y.data());
    Eigen::Map<const Eigen::VectorXd> x(y.data(), n);
    for (int i = 0; i < size; ++i)
      if (!std::isfinite(y[static_cast<std::size_t>(i)]))
        throw NumericalError(sim.plant.label + ": " +
                             (i == n ? std::string("the running cost")
                                     : sim.plant.state_names.empty() ? "x[" + std::to_string(i) + "]"
                                                                     : sim.plant.state_names[static_cast<std::size_t>(i)]) +
                             " is not finite at t = " + format_number(t));
    r.states.row(k) = x.transpose();
    if (m > 0) {
      w->x = x;
      w->input(t);
      r.inputs.row(k) = w->u.transpose();
    }
    if (w->cost) r.cost(k) = y[static_cast<std::size_t>(n)];
  }
  r.stats = ode.stats();
  return r;
}

}  // namespace

SimulationResult simulate_states(const StateSimulation& sim, double t0, const Eigen::VectorXd& x0,
                                 const std::vector<double>& output_times, const OdeOptions& options,
                                 const GlobalAccuracy& accuracy) {
  sim.validate();
  options.validate();
  const int n = sim.plant.states;
  if (x0.size() != n)
    throw InputError(sim.plant.label + ": the start state has " + std::to_string(x0.size()) + " entries, the plant " +
                     std::to_string(n) + " states");
  if (!x0.allFinite()) throw InputError(sim.plant.label + ": the start state is not finite");
  if (!std::isfinite(t0)) throw InputError(sim.plant.label + ": the start time is not finite");
  if (!output_times.empty()) {
    const double dir = output_times.back() >= t0 ? 1.0 : -1.0;
    double last = t0;
    for (double t : output_times) {
      if (!std::isfinite(t) || dir * (t - last) < 0)
        throw InputError(sim.plant.label + ": output times must run monotonically away from the start (at t = " +
                         format_number(t) + ")");
      last = t;
    }
  }
  SimulationResult best = run_once(sim, t0, x0, output_times, options);
  if (!accuracy.enabled) return best;
  if (!(accuracy.target_rtol > 0 && accuracy.target_atol > 0))
    throw InputError("GlobalAccuracy::target_rtol and target_atol must be positive");
  // Tolerance reduction (a global error estimate from two runs whose tolerances differ by a
  // factor of ten): repeated until the target is met or the tolerance floor is reached.
  constexpr double kFloor = 1e-14, kFactor = 10.0;
  OdeOptions o = options;
  OdeStats total = best.stats;
  int runs = 1;
  while (true) {
    const double next = std::max(kFloor, o.rtol / kFactor);
    const double shrink = next / o.rtol;
    if (shrink >= 1.0) {  // already at the floor: no tighter run is possible
      best.target_met = false;
      break;
    }
    o.rtol = next;
    o.atol *= shrink;
    SimulationResult fine = run_once(sim, t0, x0, output_times, o);
    total += fine.stats;
    ++runs;
    double diff = 0, ratio = 0;
    for (Eigen::Index k = 0; k < fine.states.rows(); ++k) {
      const double d = (fine.states.row(k) - best.states.row(k)).cwiseAbs().maxCoeff();
      const double allowed = accuracy.target_rtol * fine.states.row(k).cwiseAbs().maxCoeff() + accuracy.target_atol;
      diff = std::max(diff, d);
      ratio = std::max(ratio, d / allowed);
    }
    best = std::move(fine);
    best.error_estimate = diff;
    best.error_ratio = ratio;
    best.target_met = ratio <= 1.0;
    if (best.target_met || o.rtol <= kFloor) break;
  }
  best.stats = total;
  best.runs = runs;
  return best;
}

}  // namespace ordex
