#include "nonlinear/simulate.hpp"

#include <algorithm>
#include <atomic>
#include <cmath>
#include <random>
#include <sstream>
#include <thread>

#include "io/csv.hpp"
#include "io/errors.hpp"
#include "model/spelling.hpp"
#include "model/time_grid.hpp"
#include "propagation/generator.hpp"
#include "propagation/ode_integrator.hpp"
#include "propagation/propagator.hpp"

namespace ordex {

void SimulateOptions::validate(int n, int m) const {
  if (samples < 2) throw InputError("SimulateOptions::samples = " + std::to_string(samples) + " is fewer than 2");
  if (runs < 1 || runs > 1000000) throw InputError("SimulateOptions::runs = " + std::to_string(runs) + " is outside [1, 1000000]");
  if (threads < 0) throw InputError("SimulateOptions::threads = " + std::to_string(threads) + " is negative");
  if (dx0.size() != 0 && dx0.size() != n)
    throw InputError("SimulateOptions::dx0 has " + std::to_string(dx0.size()) + " entries, the model has " +
                     std::to_string(n) + " states");
  if (dx0.size() != 0 && !dx0.allFinite()) throw InputError("SimulateOptions::dx0 is not finite");
  if (u_min.size() != 0 && u_min.size() != m)
    throw InputError("SimulateOptions::u_min has " + std::to_string(u_min.size()) + " entries, the model has " +
                     std::to_string(m) + " inputs");
  if (u_max.size() != 0 && u_max.size() != m)
    throw InputError("SimulateOptions::u_max has " + std::to_string(u_max.size()) + " entries, the model has " +
                     std::to_string(m) + " inputs");
  if (u_min.size() != 0 && u_max.size() != 0 && (u_min.array() > u_max.array()).any())
    throw InputError("SimulateOptions::u_min exceeds SimulateOptions::u_max for some input");
  if (gains && gains->gains.front().rows() != m)
    throw InputError("SimulateOptions::gains: " + gains->path + " does not match the model's inputs");
  if (disturbance) disturbance->validate(m);
  if (runs > 1 && dispersions.empty())
    throw InputError("SimulateOptions::runs = " + std::to_string(runs) + " without dispersions: every run would be the same");
  propagation.validate();
}

namespace {

// The deterministic stream of run K of a batch seeded with SEED.
std::mt19937_64 run_stream(std::uint64_t seed, int k) {
  std::seed_seq seq{static_cast<std::uint32_t>(seed), static_cast<std::uint32_t>(seed >> 32),
                    static_cast<std::uint32_t>(k), 0x6f72u};
  return std::mt19937_64(seq);
}

double draw(const Dispersion& d, std::mt19937_64& rng) {
  if (d.size == 0) return 0.0;
  if (d.law == Dispersion::Law::normal) return std::normal_distribution<double>(0.0, d.size)(rng);
  return std::uniform_real_distribution<double>(-d.size, d.size)(rng);
}

struct Batch {
  const NonlinearModel& model;
  const SimulateOptions& o;
  double t0, t1;
  std::vector<double> times, breakpoints;
  Eigen::MatrixXd phi;
  OdeOptions ode;
};

// One run on PLANT (the calling thread's evaluator), parameters reset to the file's first.
RunSummary fly(const Batch& b, PlantEvaluator& plant, int k) {
  const SimulateOptions& o = b.o;
  const int n = plant.states(), m = plant.inputs();
  const SystemInfo& info = b.model.info();
  RunSummary r;
  r.index = k;
  for (std::size_t i = 0; i < info.parameters.size(); ++i) plant.set_parameter(static_cast<int>(i), info.parameters[i].second);
  r.dx0 = o.dx0.size() ? o.dx0 : Eigen::VectorXd::Zero(n);
  std::mt19937_64 rng = run_stream(o.seed, k);
  for (const Dispersion& d : o.dispersions.states) r.dx0(d.index) += draw(d, rng);
  for (const Dispersion& d : o.dispersions.parameters) {
    const double v = info.parameters[static_cast<std::size_t>(d.index)].second + draw(d, rng);
    plant.set_parameter(d.index, v);
    r.parameters.push_back({info.parameters[static_cast<std::size_t>(d.index)].first, v});
  }
  Eigen::VectorXd xn(n), un(std::max(m, 1)), u(std::max(m, 1)), dx(n), du(std::max(m, 1));
  Eigen::MatrixXd K(m, n);
  Eigen::VectorXd w(m);
  // The applied input at (t, x): nominal, feedback, limits.
  auto input = [&](double t, const double* x) {
    b.model.nominal->state(t, xn.data());
    plant.nominal_input(t, un.data());
    for (int i = 0; i < n; ++i) dx(i) = x[i] - xn(i);
    if (m == 0) return;
    u.head(m) = un.head(m);
    if (o.gains) {
      o.gains->at(t, K);
      u.head(m).noalias() -= K * dx;
    }
    if (o.u_min.size()) u.head(m) = u.head(m).cwiseMax(o.u_min);
    if (o.u_max.size()) u.head(m) = u.head(m).cwiseMin(o.u_max);
    if (o.disturbance) {
      o.disturbance->value(t, w);
      u.head(m) += w;
    }
    du.head(m) = u.head(m) - un.head(m);
  };
  OdeProblem p;
  p.size = n + 1;  // the states and the running cost
  p.label = "run " + std::to_string(k + 1);
  p.breakpoints = b.breakpoints;
  p.name_of = [&](int i) { return i < n ? info.state_names[static_cast<std::size_t>(i)] : std::string("cost"); };
  p.rhs = [&](double t, const double* y, double* ydot) {
    input(t, y);
    plant.f(t, y, u.data(), ydot);
    ydot[n] = dx.squaredNorm() + (m ? du.head(m).squaredNorm() : 0.0);
  };
  auto observe = [&](double t, const double* y) {
    input(t, y);
    const double d = dx.norm();
    if (d > r.peak_deviation) {
      r.peak_deviation = d;
      r.peak_deviation_time = t;
    }
    if (m) r.peak_input = std::max(r.peak_input, u.head(m).cwiseAbs().maxCoeff());
  };
  p.on_step = [&](double t, const double* y, const double*) { observe(t, y); };
  if (o.keep_histories) {
    r.times = b.times;
    r.states.resize(static_cast<Eigen::Index>(b.times.size()), n);
    r.inputs.resize(static_cast<Eigen::Index>(b.times.size()), m);
  }
  try {
    OdeIntegrator ode(p, b.ode);
    Eigen::VectorXd y(n + 1);
    b.model.nominal->state(b.t0, y.data());
    y.head(n) += r.dx0;
    y(n) = 0;
    ode.reset(b.t0, y.data());
    for (std::size_t i = 0; i < b.times.size(); ++i) {
      if (i > 0) ode.advance(b.times[i], y.data());
      if (!y.allFinite()) throw NumericalError("the state is not finite at t = " + format_number(b.times[i]));
      observe(b.times[i], y.data());
      if (o.keep_histories) {
        r.states.row(static_cast<Eigen::Index>(i)) = y.head(n).transpose();
        if (m) r.inputs.row(static_cast<Eigen::Index>(i)) = u.head(m).transpose();
      }
    }
    r.x_final = y.head(n);
    b.model.nominal->state(b.t1, xn.data());
    r.dx_final = r.x_final - xn;
    r.cost = y(n);
    r.linear_gap = (r.dx_final - b.phi * r.dx0).norm();
  } catch (const std::exception& e) {
    r.ok = false;
    r.failure = e.what();
  }
  return r;
}

RunStatistics statistics_of(const std::vector<RunSummary>& runs, int n) {
  RunStatistics s;
  s.dx_final_mean = Eigen::VectorXd::Zero(n);
  s.dx_final_std = Eigen::VectorXd::Zero(n);
  for (const RunSummary& r : runs) {
    if (!r.ok) {
      ++s.failed;
      continue;
    }
    ++s.completed;
    s.dx_final_mean += r.dx_final;
    s.peak_deviation_mean += r.peak_deviation;
    s.peak_deviation_max = std::max(s.peak_deviation_max, r.peak_deviation);
    s.peak_input_max = std::max(s.peak_input_max, r.peak_input);
    s.cost_mean += r.cost;
    s.linear_gap_mean += r.linear_gap;
    s.linear_gap_max = std::max(s.linear_gap_max, r.linear_gap);
  }
  if (s.completed == 0) return s;
  const double c = s.completed;
  s.dx_final_mean /= c;
  s.peak_deviation_mean /= c;
  s.cost_mean /= c;
  s.linear_gap_mean /= c;
  if (s.completed > 1) {
    for (const RunSummary& r : runs)
      if (r.ok) s.dx_final_std += (r.dx_final - s.dx_final_mean).cwiseAbs2();
    s.dx_final_std = (s.dx_final_std / (c - 1)).cwiseSqrt();
  }
  return s;
}

}  // namespace

SimulateReport simulate(const NonlinearModel& model, const SimulateOptions& o) {
  const SystemInfo& info = model.info();
  const int n = static_cast<int>(info.state_names.size()), m = static_cast<int>(info.input_names.size());
  o.validate(n, m);
  const double span0 = model.nominal->first_time(), span1 = model.nominal->last_time();
  const double t0 = o.from.value_or(span0), t1 = o.to.value_or(span1);
  if (!(t1 > t0) || t0 < span0 || t1 > span1)
    throw InputError("SimulateOptions::from/to: [" + format_number(t0) + ", " + format_number(t1) +
                     "] must run forward inside the nominal's span [" + format_number(span0) + ", " +
                     format_number(span1) + "]");
  Batch b{model, o, t0, t1, linspace(t0, t1, o.samples), {}, {}, ode_options(o.propagation, OdeScheme::Adams)};
  for (double t : info.breakpoints)
    if (t > t0 && t < t1) b.breakpoints.push_back(t);
  if (o.gains)
    for (double t : o.gains->times)
      if (t > t0 && t < t1) b.breakpoints.push_back(t);
  if (o.disturbance)
    for (double t : o.disturbance->times)
      if (t > t0 && t < t1) b.breakpoints.push_back(t);
  std::sort(b.breakpoints.begin(), b.breakpoints.end());
  b.breakpoints.erase(std::unique(b.breakpoints.begin(), b.breakpoints.end()), b.breakpoints.end());

  // The linear prediction: the transition matrix of A - B K along the nominal.
  std::unique_ptr<System> lin = model.linearization();
  SimulateReport rep;
  {
    Eigen::MatrixXd Bt(n, m), K(m, n);
    Generator g;
    g.dim = n;
    g.label = "A(t) - B(t) K(t) of the linearization";
    g.breakpoints = b.breakpoints;
    g.eval = [&](double t, MatrixRef out) {
      lin->A(t, out);
      if (o.gains) {
        lin->B(t, Bt);
        o.gains->at(t, K);
        out.noalias() -= Bt * K;
      }
    };
    PropagationOptions po = o.propagation;
    po.use_period = false;
    Propagator prop(g, po);
    b.phi = prop.transition(t0, t1);
    // The header names the runs' integrator (CVODE's scheme); the prediction's method follows.
    rep.header = report_header(*lin, t0, t1, method_name(method_of(b.ode.scheme)));
    rep.prediction_method = method_name(prop.method());
  }
  rep.closed_loop = o.gains != nullptr;
  rep.state_names = info.state_names;
  rep.input_names = info.input_names;
  rep.nominal_final.resize(n);
  model.nominal->state(t1, rep.nominal_final.data());
  rep.linear_transition = b.phi;

  int threads = o.threads > 0 ? o.threads : std::min(2, std::max(1, static_cast<int>(std::thread::hardware_concurrency())));
  threads = std::min(threads, o.runs);
  rep.threads = threads;
  rep.runs.resize(static_cast<std::size_t>(o.runs));
  std::atomic<int> next{0};
  auto worker = [&](PlantEvaluator& plant) {
    for (int k = next++; k < o.runs; k = next++) rep.runs[static_cast<std::size_t>(k)] = fly(b, plant, k);
  };
  std::vector<std::unique_ptr<PlantEvaluator>> plants;
  for (int i = 0; i < threads; ++i) plants.push_back(model.evaluator());
  std::vector<std::thread> pool;
  for (int i = 1; i < threads; ++i) pool.emplace_back(worker, std::ref(*plants[static_cast<std::size_t>(i)]));
  worker(*plants[0]);
  for (auto& th : pool) th.join();
  rep.statistics = statistics_of(rep.runs, n);
  return rep;
}

SampledInput read_disturbance(const std::string& path, const SystemInfo& info) {
  const int m = static_cast<int>(info.input_names.size());
  if (m == 0) throw InputError(path + ": a disturbance needs a model with inputs");
  CsvTable csv = read_csv(path);
  require_time_column(csv, 1);
  SampledInput w;
  w.interpolation = SampleInterpolation::Linear;
  w.times.assign(csv.values.col(0).data(), csv.values.col(0).data() + csv.values.rows());
  w.values = Eigen::MatrixXd::Zero(csv.values.rows(), m);
  for (std::size_t c = 1; c < csv.header.size(); ++c) {
    auto it = std::find(info.input_names.begin(), info.input_names.end(), csv.header[c]);
    if (it == info.input_names.end())
      throw InputError(path + ":" + std::to_string(csv.header_line) + ": column '" + csv.header[c] +
                       "' is not an input of the model" + did_you_mean(csv.header[c], info.input_names));
    w.values.col(it - info.input_names.begin()) = csv.values.col(static_cast<Eigen::Index>(c));
  }
  return w;
}

Json RunStatistics::to_json() const {
  Json j;
  j["completed"] = completed;
  j["failed"] = failed;
  j["dx_final_mean"] = vector_to_json(dx_final_mean);
  j["dx_final_std"] = vector_to_json(dx_final_std);
  j["peak_deviation_mean"] = number_to_json(peak_deviation_mean);
  j["peak_deviation_max"] = number_to_json(peak_deviation_max);
  j["peak_input_max"] = number_to_json(peak_input_max);
  j["cost_mean"] = number_to_json(cost_mean);
  j["linear_gap_mean"] = number_to_json(linear_gap_mean);
  j["linear_gap_max"] = number_to_json(linear_gap_max);
  return j;
}

namespace {
Json run_json(const RunSummary& r) {
  Json j;
  j["run"] = r.index + 1;
  j["ok"] = r.ok;
  if (!r.ok) j["failure"] = r.failure;
  j["dx0"] = vector_to_json(r.dx0);
  if (!r.parameters.empty()) {
    Json p = Json::object();
    for (const auto& kv : r.parameters) p[kv.first] = number_to_json(kv.second);
    j["parameters"] = p;
  }
  if (r.ok) {
    j["x_final"] = vector_to_json(r.x_final);
    j["dx_final"] = vector_to_json(r.dx_final);
    j["peak_deviation"] = number_to_json(r.peak_deviation);
    j["peak_deviation_time"] = number_to_json(r.peak_deviation_time);
    j["peak_input"] = number_to_json(r.peak_input);
    j["cost"] = number_to_json(r.cost);
    j["linear_gap"] = number_to_json(r.linear_gap);
  }
  return j;
}
}  // namespace

Json SimulateReport::to_json() const {
  Json j = header.to_json();
  j["mode"] = closed_loop ? "closed loop" : "open loop";
  j["threads"] = threads;
  j["linear_prediction_method"] = prediction_method;
  j["nominal_final"] = vector_to_json(nominal_final);
  j["linear_transition"] = ordex::to_json(linear_transition);
  if (runs.size() == 1) {
    const Json r = run_json(runs.front());
    for (auto it = r.begin(); it != r.end(); ++it)
      if (it.key() != "run") j[it.key()] = it.value();
  } else {
    Json list = Json::array();
    for (const RunSummary& r : runs) list.push_back(run_json(r));
    j["runs"] = list;
  }
  j["statistics"] = statistics.to_json();
  return j;
}

std::string SimulateReport::brief() const {
  std::ostringstream s;
  s << "Nonlinear " << (closed_loop ? "closed loop" : "open loop") << " of " << header.source << " over ["
    << format_number(header.t0) << ", " << format_number(header.t1) << "]: " << runs.size()
    << (runs.size() == 1 ? " run" : " runs") << " (" << statistics.completed << " completed, " << statistics.failed
    << " failed, " << threads << (threads == 1 ? " thread" : " threads") << ")\n";
  if (statistics.completed > 0) {
    s << "  final deviation |dx(t1)|: mean " << format_number(statistics.dx_final_mean.norm())
      << "; peak deviation: mean " << format_number(statistics.peak_deviation_mean) << ", max "
      << format_number(statistics.peak_deviation_max) << "\n";
    s << "  gap to the linear prediction: mean " << format_number(statistics.linear_gap_mean) << ", max "
      << format_number(statistics.linear_gap_max) << "; peak input " << format_number(statistics.peak_input_max)
      << "; cost mean " << format_number(statistics.cost_mean) << "\n";
  }
  for (const RunSummary& r : runs)
    if (!r.ok) s << "  run " << r.index + 1 << " failed: " << r.failure << "\n";
  return s.str();
}

}  // namespace ordex
