#include "response/direct_path.hpp"

#include <algorithm>

#include "io/errors.hpp"
#include "propagation/state_simulator.hpp"

namespace ordex {

void DirectAccuracy::merge(const DirectAccuracy& o) {
  if (runs == 0) {
    *this = o;
    return;
  }
  error_estimate = std::max(error_estimate, o.error_estimate);
  error_ratio = std::max(error_ratio, o.error_ratio);
  final_rtol = std::min(final_rtol, o.final_rtol);
  runs += o.runs;
  target_met = target_met && o.target_met;
}

Eigen::MatrixXd direct_states(const System& sys, const InputHistory& h, Hold hold,
                              const std::vector<double>& knots, const Eigen::VectorXd& x0,
                              const OdeOptions& options, OdeStats& stats, DirectAccuracy* accuracy) {
  StateSimulation sim;
  sim.plant = linear_plant(sys, knots.front(), knots.back());
  sim.plant.label = "x' = A x + B u (direct path of " + h.source + ")";
  if (sys.inputs() > 0) {
    sim.input.samples.times = h.times;
    sim.input.samples.values = h.values;
    sim.input.samples.interpolation =
        hold == Hold::Zoh ? SampleInterpolation::ZeroOrderHold : SampleInterpolation::Linear;
  }
  GlobalAccuracy global;
  global.enabled = true;
  global.target_rtol = options.rtol;
  global.target_atol = options.atol;
  const SimulationResult r = simulate_states(sim, knots.front(), x0, knots, options, global);
  stats += r.stats;
  if (accuracy) {
    DirectAccuracy a;
    a.target_rtol = global.target_rtol;
    a.target_atol = global.target_atol;
    a.error_estimate = r.error_estimate;
    a.error_ratio = r.error_ratio;
    a.final_rtol = r.final_rtol;
    a.runs = r.runs;
    a.target_met = r.target_met;
    accuracy->merge(a);
  }
  return r.states;
}

}  // namespace ordex
