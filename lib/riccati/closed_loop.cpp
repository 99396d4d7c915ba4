#include "riccati/closed_loop.hpp"

#include <cmath>
#include <memory>

#include "io/errors.hpp"
#include "propagation/propagator.hpp"

namespace ordex {

GainEvaluator::GainEvaluator(const System& sys, const Weights& w, const RiccatiSolution& sol)
    : sol_(sol), coeff_(sys, w), P_(sys.states(), sys.states()), K_(sys.inputs(), sys.states()) {}

void GainEvaluator::K_at(double t, Eigen::MatrixXd& K) {
  sol_.P_at(t, P_);
  coeff_.at(t);
  coeff_.gain(P_, K);
}

void GainEvaluator::closed_loop_matrix(double t, MatrixRef out) {
  K_at(t, K_);
  out = coeff_.A;
  out.noalias() -= coeff_.B * K_;
}

void ClosedLoopOptions::validate() const {
  if (!(rtol >= 1e-14 && rtol <= 1e-1)) throw InputError("closed-loop rtol: must lie in [1e-14, 0.1]");
  if (!(atol > 0 && std::isfinite(atol))) throw InputError("closed-loop atol: must be positive");
}

ClosedLoopRun simulate_closed_loop(const System& sys, const Weights& w, const RiccatiSolution& sol,
                                   const Eigen::VectorXd& x0, const std::vector<double>& output_times,
                                   const ClosedLoopOptions& options) {
  options.validate();
  const int n = sys.states(), m = sys.inputs();
  if (x0.size() != n) throw InputError("--x0: " + std::to_string(x0.size()) + " entries, the model has " +
                                       std::to_string(n) + " states");
  struct Work {
    Work(const System& s, const Weights& w, const RiccatiSolution& sol, int n, int m)
        : gains(s, w, sol), K(m, n), x(n), u(m), dx(n) {}
    GainEvaluator gains;
    Eigen::MatrixXd K;
    Eigen::VectorXd x, u, dx;
  };
  auto work = std::make_shared<Work>(sys, w, sol, n, m);

  OdeProblem problem;
  problem.size = n + 1;  // x, then the running cost so far
  problem.label = "closed-loop simulation";
  problem.rhs = [work, n](double t, const double* y, double* ydot) {
    Work& k = *work;
    k.x = Eigen::Map<const Eigen::VectorXd>(y, n);
    k.gains.K_at(t, k.K);
    const LqrCoefficients& c = k.gains.coefficients();
    k.u.noalias() = -k.K * k.x;
    k.dx.noalias() = c.A * k.x;
    k.dx.noalias() += c.B * k.u;
    Eigen::Map<Eigen::VectorXd>(ydot, n) = k.dx;
    ydot[n] = c.running_cost(k.x, k.u);
  };
  const double t0 = sol.t0(), t1 = sol.t1();
  problem.breakpoints = sys.breakpoints_between(t0, t1);
  OdeOptions ode;
  ode.scheme = OdeScheme::Adams;
  ode.rtol = options.rtol;
  ode.atol = options.atol;
  OdeIntegrator integrator(problem, ode);

  ClosedLoopRun run;
  run.x0 = x0;
  run.times = output_times;
  run.states.resize(static_cast<Eigen::Index>(output_times.size()), n);
  run.inputs.resize(static_cast<Eigen::Index>(output_times.size()), m);
  std::vector<double> y(static_cast<std::size_t>(n + 1), 0.0);
  Eigen::Map<Eigen::VectorXd>(y.data(), n) = x0;
  integrator.reset(t0, y.data());
  Eigen::MatrixXd K(m, n);
  for (std::size_t k = 0; k < output_times.size(); ++k) {
    const double t = output_times[k];
    if (t != t0) integrator.advance(t, y.data());
    Eigen::Map<const Eigen::VectorXd> x(y.data(), n);
    if (!x.allFinite() || !std::isfinite(y[n]))
      throw NumericalError("closed-loop simulation: state is not finite at t = " + format_number(t));
    work->gains.K_at(t, K);
    run.states.row(static_cast<Eigen::Index>(k)) = x.transpose();
    run.inputs.row(static_cast<Eigen::Index>(k)) = (-K * x).transpose();
  }
  run.x_final = Eigen::Map<const Eigen::VectorXd>(y.data(), n);
  const Eigen::MatrixXd Qf = w.Qf.at(t1);
  run.cost_simulated = y[n] + run.x_final.dot(Qf * run.x_final);
  run.cost_predicted = x0.dot(sol.P.front() * x0);
  run.stats = integrator.stats();
  return run;
}

Eigen::MatrixXd closed_loop_transition(const System& sys, const Weights& w, const RiccatiSolution& sol, double ta,
                                       double tb, const PropagationOptions& options, PropagationStats* stats) {
  auto gains = std::make_shared<GainEvaluator>(sys, w, sol);
  Generator g;
  g.dim = sys.states();
  g.eval = [gains](double t, MatrixRef out) { gains->closed_loop_matrix(t, out); };
  g.breakpoints = sys.breakpoints_between(ta, tb);
  g.label = "closed-loop A - B K(t)";
  PropagationOptions engine = options;
  engine.progress = {};
  Propagator prop(g, engine);
  Eigen::MatrixXd phi = prop.transition(ta, tb);
  if (stats) *stats = prop.stats();
  return phi;
}

}  // namespace ordex
