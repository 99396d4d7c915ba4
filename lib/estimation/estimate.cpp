#include "estimation/estimate.hpp"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <iomanip>
#include <sstream>

#include "estimation/covariance_routes.hpp"
#include "io/csv.hpp"
#include "io/errors.hpp"
#include "model/time_grid.hpp"

namespace ordex {

using estimation_detail::CovarianceRoute;

void EstimationOptions::validate() const {
  propagation.validate();
  noise_check.validate();
  if (!noise) throw InputError("EstimationOptions::noise is not set (Qn, Rn, P0 and how the noise enters)");
  if (samples < 2 || samples > 10000000)
    throw InputError("EstimationOptions::samples = " + std::to_string(samples) + " is outside [2, 10000000]");
  if (dense_intervals < 1 || dense_intervals > 10000000)
    throw InputError("EstimationOptions::dense_intervals = " + std::to_string(dense_intervals) +
                     " is outside [1, 10000000]");
}

std::string estimation_kind_name(bool covariance_analysis) {
  return covariance_analysis ? "covariance-analysis" : "kalman-bucy";
}

Eigen::MatrixXd joseph_update(const Eigen::MatrixXd& P, const Eigen::MatrixXd& H, const Eigen::MatrixXd& R,
                              Eigen::MatrixXd* K_out) {
  const Eigen::MatrixXd PHt = P * H.transpose();
  Eigen::MatrixXd innovation = H * PHt + R;
  innovation = (0.5 * (innovation + innovation.transpose())).eval();
  Eigen::LLT<Eigen::MatrixXd> llt(innovation);
  if (llt.info() != Eigen::Success) throw NumericalError("measurement update: H P H' + R is not positive definite");
  // K = P H' S^-1, i.e. S K' = H P.
  const Eigen::MatrixXd K = llt.solve(PHt.transpose()).transpose();
  Eigen::MatrixXd IKH = -K * H;
  IKH.diagonal().array() += 1.0;
  Eigen::MatrixXd out = IKH * P * IKH.transpose() + K * R * K.transpose();
  out = (0.5 * (out + out.transpose())).eval();
  if (K_out) *K_out = K;
  return out;
}

namespace {

// P along the history by one route, and the update gains of a covariance analysis.
struct History {
  std::vector<double> times;
  std::vector<Eigen::MatrixXd> P;
  std::vector<double> gain_times;
  std::vector<Eigen::MatrixXd> gains;
  estimation_detail::RouteStats stats;
};

History run_route(const System& sys, const NoiseModel& noise, const EstimationOptions& o, RiccatiSolver route,
                  double t0, double t1, const std::vector<double>& samples,
                  const std::vector<ScheduledUpdate>& updates) {
  const bool filter = !o.schedule;
  const int n = sys.states(), p = sys.outputs();
  CovarianceRoute carrier(sys, noise, filter, route, o.propagation, o.dense_intervals, t0, t1);
  History h;
  Eigen::MatrixXd P = 0.5 * (noise.P0 + noise.P0.transpose());
  h.times.push_back(t0);
  h.P.push_back(P);
  const double tie = 1e-12 * std::max(1.0, t1 - t0);
  std::size_t next_sample = 1;  // samples[0] = t0 is recorded
  double now = t0;
  // Carries P from NOW to T, recording the samples strictly between and T itself.
  auto carry_to = [&](double t) {
    if (!(t > now)) return;
    std::vector<double> seg{now};
    while (next_sample < samples.size() && samples[next_sample] < t - tie) seg.push_back(samples[next_sample++]);
    while (next_sample < samples.size() && samples[next_sample] <= t + tie) ++next_sample;  // T itself
    seg.push_back(t);
    carrier.carry(seg, P, [&](std::size_t k, const Eigen::MatrixXd& X) {
      h.times.push_back(seg[k]);
      h.P.push_back(X);
    });
    P = h.P.back();
    now = t;
  };
  NoiseTerms terms(sys, noise, false);
  std::size_t u = 0;
  while (u < updates.size()) {
    const double t = updates[u].t;
    carry_to(t);
    terms.at(t);
    for (; u < updates.size() && updates[u].t <= t + tie; ++u) {
      const Sensor& sensor = o.schedule->sensors[updates[u].sensor];
      const std::vector<int> rows = sensor_output_indices(sensor, sys);
      const int k = static_cast<int>(rows.size());
      Eigen::MatrixXd H(k, n), R = sensor.Rn.at(t), K;
      for (int i = 0; i < k; ++i) H.row(i) = terms.C.row(rows[i]);
      P = joseph_update(P, H, R, &K);
      Eigen::MatrixXd L = Eigen::MatrixXd::Zero(n, p);
      for (int i = 0; i < k; ++i) L.col(rows[i]) = K.col(i);
      h.gain_times.push_back(t);
      h.gains.push_back(L);
    }
    h.times.push_back(t);
    h.P.push_back(P);
  }
  carry_to(t1);
  h.stats = carrier.stats();
  return h;
}

}  // namespace

EstimationReport estimate(const System& sys, double t0, double t1, const EstimationOptions& options) {
  options.validate();
  const NoiseModel& noise = *options.noise;
  const SystemInfo& info = sys.info();
  if (!std::isfinite(t0) || !std::isfinite(t1) || !(t1 > t0))
    throw InputError("estimate: the window [" + format_number(t0) + ", " + format_number(t1) +
                     "] must be finite and run forward");
  const bool analysis = options.schedule.has_value();
  const std::vector<double> samples = linspace(t0, t1, options.samples);
  std::vector<std::size_t> unused;
  const std::vector<double> check_times =
      dense_grid(samples, std::min(options.dense_intervals, 2000), sys.breakpoints_between(t0, t1), unused);
  check_noise(noise, sys, check_times, !analysis, options.noise_check);
  std::vector<ScheduledUpdate> updates;
  if (analysis) {
    if (sys.outputs() < 1) throw InputError(info.source + ": the model has no outputs; measurements need C");
    updates = schedule_updates(*options.schedule, sys, t0, t1, options.noise_check);
  }

  const auto start = std::chrono::steady_clock::now();
  const History h = run_route(sys, noise, options, options.solver, t0, t1, samples, updates);
  EstimationReport r;
  if (options.cross_check) {
    const RiccatiSolver other =
        options.solver == RiccatiSolver::RiccatiOde ? RiccatiSolver::Hamiltonian : RiccatiSolver::RiccatiOde;
    // A failing cross-check does not cost the results: the report says it failed and why.
    try {
      const History c = run_route(sys, noise, options, other, t0, t1, samples, updates);
      if (c.P.size() != h.P.size()) throw NumericalError("the routes' histories differ in length");
      double gap = 0, scale = 1e-300;
      for (std::size_t k = 0; k < h.P.size(); ++k) {
        gap = std::max(gap, (h.P[k] - c.P[k]).norm());
        scale = std::max(scale, h.P[k].norm());
      }
      r.agreement = gap / scale;
      r.check_engine = c.stats.engine;
    } catch (const NumericalError& e) {
      r.check_failure = e.what();
    }
  }
  r.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();

  r.header = report_header(sys, t0, t1, h.stats.engine);
  r.covariance_analysis = analysis;
  r.noise_source = noise.source;
  r.noise_path = noise.noise_path();
  if (analysis) r.schedule_source = options.schedule->source;
  r.states = info.state_names;
  r.outputs = info.output_names;
  r.t0 = t0;
  r.t1 = t1;
  r.solver = options.solver;
  r.engine = h.stats.engine;
  r.steps = h.stats.steps;
  r.evaluations = h.stats.evaluations;
  r.history_times = h.times;
  r.P = h.P;
  for (const Eigen::MatrixXd& P : r.P) {
    if (!P.allFinite()) throw NumericalError("P is not finite");
    r.sigma.push_back(P.diagonal().cwiseMax(0.0).cwiseSqrt());
  }
  r.P0 = r.P.front();
  r.P_final = r.P.back();
  r.sigma_final = r.sigma.back();
  r.updates = updates.size();
  if (analysis) {
    r.gain_times = h.gain_times;
    r.gains = h.gains;
  } else {
    // L = P C' Rn^-1 at each sample time (the history is the sample grid here).
    NoiseTerms terms(sys, noise, true);
    for (std::size_t k = 0; k < r.history_times.size(); ++k) {
      terms.at(r.history_times[k]);
      r.gain_times.push_back(r.history_times[k]);
      r.gains.push_back(r.P[k] * terms.C.transpose() * terms.Rn_inv);
      if (!r.gains.back().allFinite())
        throw NumericalError("gain L is not finite at t = " + format_number(r.history_times[k]));
    }
  }
  return r;
}

Json EstimationReport::to_json() const {
  Json j = header.to_json();
  j["kind"] = periodic.is_null() ? estimation_kind_name(covariance_analysis) : "periodic-kalman-bucy";
  j["solver"] = solver_name(solver);
  Json check = nullptr;
  const std::string other =
      solver_name(solver == RiccatiSolver::RiccatiOde ? RiccatiSolver::Hamiltonian : RiccatiSolver::RiccatiOde);
  if (agreement)
    check = {{"solver", other}, {"status", "ok"}, {"engine", check_engine}, {"agreement", number_to_json(*agreement)}};
  else if (!check_failure.empty())
    check = {{"solver", other}, {"status", "failed"}, {"reason", check_failure}, {"agreement", nullptr}};
  j["cross_check"] = check;
  j["noise"] = {{"source", noise_source}, {"enters_through", noise_path}};
  if (covariance_analysis) j["schedule"] = {{"source", schedule_source}, {"updates", updates}};
  j["states"] = states;
  j["outputs"] = outputs;
  j["P0"] = ordex::to_json(P0);
  j["P_final"] = ordex::to_json(P_final);
  j["sigma_final"] = vector_to_json(sigma_final);
  j["L0"] = gains.empty() ? Json(nullptr) : ordex::to_json(gains.front());
  Json L = Json::array();
  for (const Eigen::MatrixXd& g : gains) L.push_back(ordex::to_json(g));
  j["gain_schedule"] = {{"times", vector_to_json(gain_times)}, {"L", L}};
  j["stats"] = {{"steps", steps}, {"evaluations", evaluations}, {"seconds", seconds}};
  if (!periodic.is_null()) j["periodic"] = periodic;
  return j;
}

std::string EstimationReport::brief() const {
  std::ostringstream out;
  out << std::setprecision(8);
  out << (covariance_analysis ? "covariance analysis" : periodic.is_null() ? "Kalman-Bucy filter" : "periodic steady-state Kalman-Bucy filter") << " for "
      << (header.title.empty() ? header.source : header.title) << " over [" << t0 << ", " << t1 << "]\n";
  out << "noise: " << noise_source << " (process noise through " << noise_path << ")\n";
  if (covariance_analysis) out << "schedule: " << schedule_source << ", " << updates << " measurement updates\n";
  out << "solver: " << solver_name(solver) << " (" << engine << "), " << steps << " steps";
  if (agreement)
    out << "; cross-check by " << check_engine << ": relative difference " << std::setprecision(2) << *agreement
        << std::setprecision(8);
  else if (!check_failure.empty())
    out << "; cross-check FAILED: " << check_failure << " (the results are the primary route's and complete)";
  out << "\n";
  out << "sigma at t1:";
  for (Eigen::Index i = 0; i < sigma_final.size(); ++i)
    out << " " << states[static_cast<std::size_t>(i)] << "=" << sigma_final(i);
  out << "\n";
  out << "gain schedule: " << gains.size() << (covariance_analysis ? " updates" : " times") << "\n";
  if (!periodic.is_null()) {
    const Json& cl = periodic["closed_loop_floquet"];
    const Json& ol = periodic["open_loop_floquet"];
    out << "periodic: P after one period back returns within " << periodic["periodicity_gap"].get<double>()
        << " (relative); Floquet multipliers of A: |mu| max " << ol["largest_modulus"].get<double>()
        << "; of A - L C: |mu| max " << cl["largest_modulus"].get<double>()
        << (cl["stable"].get<bool>() ? " (the error decays)" : " (NOT stable)") << "\n";
    if (periodic.contains("note")) out << "note: " << periodic["note"].get<std::string>() << "\n";
  }
  return out.str();
}

void write_estimator_gain_csv(const std::string& path, const EstimationReport& r) {
  const int n = static_cast<int>(r.states.size()), p = static_cast<int>(r.outputs.size());
  std::vector<std::string> header{"t"};
  for (const std::string& name : matrix_column_names("L", n, p)) header.push_back(name);
  CsvWriter csv(path, header);
  std::vector<double> row;
  for (std::size_t k = 0; k < r.gain_times.size(); ++k) {
    row.assign(1, r.gain_times[k]);
    append_row_major(row, r.gains[k]);
    csv.row(row);
  }
  csv.commit();
}

void write_sigma_csv(const std::string& path, const EstimationReport& r) {
  std::vector<std::string> header{"t"};
  for (const std::string& s : r.states) header.push_back("sigma_" + s);
  CsvWriter csv(path, header);
  for (std::size_t k = 0; k < r.history_times.size(); ++k) csv.row(r.history_times[k], r.sigma[k]);
  csv.commit();
}

}  // namespace ordex
