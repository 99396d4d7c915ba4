#include "estimation/periodic_estimate.hpp"

#include <chrono>
#include <cmath>
#include <memory>

#include "io/errors.hpp"
#include "riccati/periodic_filter.hpp"

namespace ordex {

namespace {

Json multipliers_json(const FloquetReport& f) {
  Json mult = Json::array();
  for (Eigen::Index k = 0; k < f.multipliers.size(); ++k) {
    const auto mu = f.multipliers(k);
    mult.push_back({{"re", mu.real()}, {"im", mu.imag()}, {"abs", std::abs(mu)}});
  }
  return {{"period", f.period}, {"multipliers", mult}, {"largest_modulus", f.largest_modulus}, {"stable", f.stable}};
}

}  // namespace

EstimationReport estimate_periodic(const System& sys, double t0, const EstimationOptions& options,
                                   const PeriodicOptions& periodic) {
  options.validate();
  periodic.validate();
  if (!options.noise) throw InputError("EstimationOptions::noise: not given (Qn, Rn and P0 are needed)");
  if (options.schedule)
    throw InputError("EstimationOptions::schedule: the periodic steady state is the continuous filter's; "
                     "a sensor schedule has none (drop the schedule, or analyse the covariance over a window)");
  const NoiseModel& noise = *options.noise;
  if (!noise.Rn)
    throw InputError(noise.source + ": Rn: required by the periodic filter (the measurement noise of the outputs)");
  if (!sys.info().period)
    throw InputError(sys.info().source + ": the periodic filter needs a model with a period ([system] period)");
  const double T = *sys.info().period;
  const auto start = std::chrono::steady_clock::now();
  std::vector<double> check_times;
  for (int k = 0; k < options.samples; ++k) check_times.push_back(t0 + T * k / (options.samples - 1));
  check_noise(noise, sys, check_times, /*need_rn=*/true, options.noise_check);

  // The process noise as it enters the states, G Qn G', evaluated from the noise terms.
  auto terms = std::make_shared<NoiseTerms>(sys, noise, true);
  const int n = sys.states();
  const WeightMatrix process = WeightMatrix::function(
      n, n,
      [terms](double t, MatrixRef out) {
        terms->at(t);
        out = terms->S;
      },
      noise.source + ": G Qn G'");
  PeriodicFilterOptions fo;
  fo.riccati.solver = options.solver;
  fo.riccati.propagation = options.propagation;
  fo.riccati.dense_intervals = options.dense_intervals;
  fo.samples = options.samples;
  fo.periodic = periodic;
  const PeriodicFilterSolution s = periodic_filter(sys, t0, process, *noise.Rn, fo);

  EstimationReport r;
  const std::string engine = options.solver == RiccatiSolver::RiccatiOde ? "cvode-bdf"
                                                                          : method_name(options.propagation.method);
  r.header = report_header(sys, t0, t0 + s.period, engine);
  r.noise_source = noise.source;
  r.noise_path = noise.noise_path();
  r.states = sys.info().state_names;
  r.outputs = sys.info().output_names;
  r.t0 = t0;
  r.t1 = t0 + s.period;
  r.solver = options.solver;
  r.engine = engine;
  r.P0 = s.P0;
  r.P_final = s.P.back();
  r.history_times = s.times;
  r.P = s.P;
  for (const Eigen::MatrixXd& P : s.P) r.sigma.push_back(P.diagonal().cwiseMax(0.0).cwiseSqrt());
  r.sigma_final = r.sigma.back();
  r.gain_times = s.times;
  r.gains = s.L;
  r.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  r.periodic = {{"period", s.period},
                {"passes", s.steady.passes},
                {"periodicity_gap", s.steady.gap},
                {"x1_rcond", s.steady.x1_rcond},
                {"closed_loop_floquet", multipliers_json(s.closed_loop)},
                {"open_loop_floquet", multipliers_json(s.open_loop)}};
  if (!s.steady.note.empty()) r.periodic["note"] = s.steady.note;
  return r;
}

}  // namespace ordex
