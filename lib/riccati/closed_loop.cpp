#include "riccati/closed_loop.hpp"

#include <cmath>
#include <memory>

#include "io/errors.hpp"
#include "propagation/propagator.hpp"
#include "propagation/state_simulator.hpp"

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
  if (!(rtol >= 1e-14 && rtol <= 1e-1))
    throw InputError("ClosedLoopOptions::rtol = " + format_number(rtol) + " is outside [1e-14, 0.1]");
  if (!(atol > 0 && std::isfinite(atol)))
    throw InputError("ClosedLoopOptions::atol = " + format_number(atol) + " must be a positive number");
  if (max_steps < 1) throw InputError("ClosedLoopOptions::max_steps = " + std::to_string(max_steps) + " must be at least 1");
}

ClosedLoopRun simulate_closed_loop(const System& sys, const Weights& w, const RiccatiSolution& sol,
                                   const Eigen::VectorXd& x0, const std::vector<double>& output_times,
                                   const ClosedLoopOptions& options) {
  options.validate();
  const int n = sys.states(), m = sys.inputs();
  if (x0.size() != n) throw InputError("x0: " + std::to_string(x0.size()) + " entries, the model has " +
                                       std::to_string(n) + " states");
  // The plant's A and B come from the coefficients the gain was computed with (evaluated once
  // per t), so the simulation and the running cost see the same matrices.
  auto gains = std::make_shared<GainEvaluator>(sys, w, sol);
  auto K = std::make_shared<Eigen::MatrixXd>(m, n);
  StateSimulation sim;
  sim.plant = linear_plant(sys, sol.t0(), sol.t1());
  sim.plant.label = "closed-loop simulation";
  sim.plant.A = [gains](double t, MatrixRef a) {
    gains->coefficients().at(t);
    a = gains->coefficients().A;
  };
  sim.plant.B = [gains](double t, MatrixRef b) {
    gains->coefficients().at(t);
    b = gains->coefficients().B;
  };
  sim.input.gain = [gains, K](double t, MatrixRef k) {
    gains->K_at(t, *K);
    k = *K;
  };
  // x'Q x + 2 x'N u + u'R u with the coefficients of the gain just evaluated at t.
  sim.running_cost = [gains](double t, const Eigen::VectorXd& x, const Eigen::VectorXd& u) {
    gains->coefficients().at(t);
    return gains->coefficients().running_cost(x, u);
  };
  const double t0 = sol.t0(), t1 = sol.t1();
  OdeOptions ode;
  ode.scheme = OdeScheme::Adams;
  ode.rtol = options.rtol;
  ode.atol = options.atol;
  ode.max_steps = options.max_steps;
  const SimulationResult r = simulate_states(sim, t0, x0, output_times, ode);
  if (r.stats.steps > options.max_steps)
    throw NumericalError("closed-loop simulation: more than ClosedLoopOptions::max_steps = " +
                         std::to_string(options.max_steps) + " steps by t = " + format_number(output_times.back()));

  ClosedLoopRun run;
  run.x0 = x0;
  run.times = output_times;
  run.states = r.states;
  run.inputs = r.inputs;
  run.x_final = output_times.empty() ? x0 : Eigen::VectorXd(r.states.bottomRows(1).transpose());
  const double cost_so_far = output_times.empty() ? 0.0 : r.cost(r.cost.size() - 1);
  const Eigen::MatrixXd Qf = w.Qf.at(t1);
  run.cost_simulated = cost_so_far + run.x_final.dot(Qf * run.x_final);
  run.cost_predicted = x0.dot(sol.P.front() * x0);
  run.stats = r.stats;
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
