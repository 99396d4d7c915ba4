#include "riccati/regulator.hpp"

#include <cmath>
#include <iomanip>
#include <limits>
#include <sstream>

#include "io/csv.hpp"
#include "io/errors.hpp"
#include "model/time_grid.hpp"
#include "riccati/riccati_routes.hpp"

namespace ordex {

using riccati_detail::require_finite_matrix;

void RegulatorOptions::validate() const {
  riccati.validate();
  closed_loop.validate();
  if (samples < 2 || samples > 10000000)
    throw InputError("RegulatorOptions::samples = " + std::to_string(samples) + " is outside [2, 10000000]");
  if (check_max_steps < 100 || check_max_steps > 1000000000L)
    throw InputError("RegulatorOptions::check_max_steps = " + std::to_string(check_max_steps) +
                     " is outside [100, 1000000000]");
  if (x0 && x0->size() == 0) throw InputError("RegulatorOptions::x0: empty vector");
  if (x0 && !x0->allFinite()) throw InputError("RegulatorOptions::x0: entries must be finite");
}

std::string check_status_name(ClosedLoopCheck::Status s) {
  switch (s) {
    case ClosedLoopCheck::Status::Done: return "ok";
    case ClosedLoopCheck::Status::Failed: return "failed";
    case ClosedLoopCheck::Status::Skipped: break;
  }
  return "skipped";
}

namespace {

// The closed-loop check. Each part runs under the step budget and is caught on its own, so a
// stiff plant that defeats one part still gives the others, and the gains are never lost.
ClosedLoopCheck check_closed_loop(const System& sys, const Weights& w, const RiccatiSolution& sol,
                                  const std::vector<double>& times, const RegulatorOptions& options) {
  ClosedLoopCheck c;
  c.status = ClosedLoopCheck::Status::Done;
  c.agreement = std::numeric_limits<double>::quiet_NaN();
  auto failed = [&c, &options](const std::string& part, const std::exception& e) {
    std::string what = e.what();
    // The engine names its own step limit; say which option set it.
    if (what.find("max_steps") != std::string::npos || what.find("mxstep") != std::string::npos)
      what += " (the step budget of the check, RegulatorOptions::check_max_steps)";
    c.reason += (c.status == ClosedLoopCheck::Status::Failed ? "; " : "") + part + ": " + what;
    c.status = ClosedLoopCheck::Status::Failed;
  };
  const double t0 = sol.t0(), t1 = sol.t1();
  PropagationOptions engine = options.riccati.propagation;
  engine.max_steps = options.check_max_steps;
  engine.progress = {};
  try {
    Eigen::MatrixXd phi = closed_loop_transition(sys, w, sol, t0, t1, engine, &c.stats);
    require_finite_matrix(phi, "closed-loop transition matrix", t1);
    c.phi = phi;
    // A periodic plant over whole periods: the closed loop's multipliers over the first period,
    // where a long horizon's gains are close to the periodic steady-state regulator.
    if (const auto& period = sys.info().period) {
      const double T = *period, periods = (t1 - t0) / T, whole = std::round(periods);
      if (whole >= 1 && std::abs(periods - whole) <= 1e-9 * std::max(1.0, periods)) {
        ClosedLoopFloquet f;
        f.window_start = t0;
        f.window_end = whole == 1 ? t1 : t0 + T;
        const Eigen::MatrixXd M = whole == 1 ? phi : closed_loop_transition(sys, w, sol, t0, f.window_end, engine);
        require_finite_matrix(M, "closed-loop monodromy matrix", f.window_end);
        f.floquet = floquet_analysis(M, T);
        c.floquet = f;
      }
    }
  } catch (const NumericalError& e) {
    failed("closed-loop transition matrix", e);
  }
  if (options.x0) {
    ClosedLoopOptions run_options = options.closed_loop;
    run_options.max_steps = options.check_max_steps;
    try {
      c.run = simulate_closed_loop(sys, w, sol, *options.x0, times, run_options);
    } catch (const NumericalError& e) {
      failed("closed-loop run from x0", e);
    }
    if (c.phi && c.run)
      c.agreement = (*c.phi * *options.x0 - c.run->x_final).norm() / std::max(c.run->x_final.norm(), 1e-300);
  }
  return c;
}

}  // namespace

RegulatorReport regulate(const System& sys, double t0, double t1, const RegulatorOptions& options) {
  options.validate();
  const SystemInfo& info = sys.info();
  const int n = sys.states(), m = sys.inputs();
  if (m < 1) throw InputError(info.source + ": the model has no inputs; a regulator needs B");
  if (!std::isfinite(t0) || !std::isfinite(t1))
    throw InputError("regulate: the horizon [" + format_number(t0) + ", " + format_number(t1) + "] must be finite");
  if (!(t1 > t0))
    throw InputError("regulate: the horizon must run forward (t1 = " + format_number(t1) +
                     " is not later than t0 = " + format_number(t0) + ")");
  if (options.x0 && options.x0->size() != n)
    throw InputError("RegulatorOptions::x0: " + std::to_string(options.x0->size()) + " entries, the model has " +
                     std::to_string(n) + " states");
  const Weights w = options.weights ? *options.weights : default_weights(n, m);
  const std::vector<double> times = linspace(t0, t1, options.samples);
  const RiccatiSolution sol = solve_riccati(sys, w, times, options.riccati);

  RegulatorReport r;
  r.weights = w.source;
  r.weights_note = w.note;
  r.states = info.state_names;
  r.inputs = info.input_names;
  r.t0 = t0;
  r.t1 = t1;
  r.dense_nodes = sol.nodes.size();
  r.riccati = sol.stats;
  r.header = report_header(sys, t0, t1, sol.stats.engine);
  r.P0 = sol.P.front();
  r.P0_eigenvalues = Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd>(r.P0, Eigen::EigenvaluesOnly).eigenvalues();
  // The schedule as the controller applies it: K from the Hermite P and the plant at each time.
  GainEvaluator gains(sys, w, sol);
  Eigen::MatrixXd K(m, n);
  r.times = times;
  if (options.keep_schedule) {
    r.gains.reserve(times.size());
    r.P.reserve(times.size());
  }
  for (std::size_t k = 0; k < times.size(); ++k) {
    gains.K_at(times[k], K);
    require_finite_matrix(K, "gain K", times[k]);
    if (k == 0) r.K0 = K;
    const Eigen::MatrixXd& P = sol.P[sol.output_index[k]];
    if (options.on_sample) options.on_sample(k, times[k], K, P);
    if (options.keep_schedule) {
      r.gains.push_back(K);
      r.P.push_back(P);
    }
  }
  if (options.x0) r.cost_predicted = options.x0->dot(r.P0 * *options.x0);
  if (options.check_closed_loop) r.closed_loop = check_closed_loop(sys, w, sol, times, options);
  return r;
}

namespace {

Json floquet_json(const ClosedLoopFloquet& f) {
  Json j;
  j["period"] = f.floquet.period;
  j["window"] = {f.window_start, f.window_end};
  Json mu = Json::array();
  for (Eigen::Index i = 0; i < f.floquet.multipliers.size(); ++i) {
    const auto z = f.floquet.multipliers(i);
    mu.push_back({{"re", z.real()}, {"im", z.imag()}, {"abs", std::abs(z)}});
  }
  j["multipliers"] = mu;
  Json ex = Json::array();
  for (Eigen::Index i = 0; i < f.floquet.exponents.size(); ++i) {
    const auto z = f.floquet.exponents(i);
    ex.push_back({{"re", number_to_json(z.real())}, {"im", number_to_json(z.imag())}});
  }
  j["exponents"] = ex;
  j["stable"] = f.floquet.stable;
  return j;
}

std::string row_text(const Eigen::MatrixXd& m, Eigen::Index i) {
  std::ostringstream s;
  s << std::setprecision(6);
  for (Eigen::Index j = 0; j < m.cols(); ++j) s << (j ? "  " : "") << std::setw(12) << m(i, j);
  return s.str();
}

}  // namespace

Json RegulatorReport::to_json() const {
  Json j = header.to_json();
  j["solver"] = solver_name(riccati.solver);
  j["weights"] = weights;
  if (!weights_note.empty()) j["weights_note"] = weights_note;
  j["states"] = states;
  j["inputs"] = inputs;
  j["samples"] = times.size();
  j["dense_nodes"] = dense_nodes;
  j["P0"] = ordex::to_json(P0);
  j["K0"] = ordex::to_json(K0);
  j["P0_eigenvalues"] = vector_to_json(P0_eigenvalues);
  Json K = Json::array();
  for (const Eigen::MatrixXd& g : gains) K.push_back(ordex::to_json(g));
  j["gain_schedule"] = {{"times", vector_to_json(times)}, {"K", K}};
  const std::optional<ClosedLoopRun>& run = closed_loop.run;
  if (cost_predicted) {
    j["x0"] = run ? vector_to_json(run->x0) : Json(nullptr);
    j["cost_predicted"] = number_to_json(*cost_predicted);
    j["cost_simulated"] = run ? number_to_json(run->cost_simulated) : Json(nullptr);
    j["cost_relative_difference"] =
        run ? number_to_json(std::abs(run->cost_simulated - *cost_predicted) / std::max(std::abs(*cost_predicted), 1e-300))
            : Json(nullptr);
    j["x_final"] = run ? vector_to_json(run->x_final) : Json(nullptr);
  }
  Json cl;
  cl["status"] = check_status_name(closed_loop.status);
  if (closed_loop.status == ClosedLoopCheck::Status::Failed) cl["reason"] = closed_loop.reason;
  if (closed_loop.status != ClosedLoopCheck::Status::Skipped) {
    cl["phi"] = closed_loop.phi ? ordex::to_json(*closed_loop.phi) : Json(nullptr);
    if (cost_predicted) cl["agreement"] = number_to_json(closed_loop.agreement);
    cl["steps"] = closed_loop.stats.steps;
    if (run) cl["simulation_steps"] = run->stats.steps;
  }
  j["closed_loop"] = cl;
  if (closed_loop.floquet) j["floquet"] = floquet_json(*closed_loop.floquet);
  j["stats"] = {{"steps", riccati.steps},
                {"evaluations", riccati.evaluations},
                {"linear_iterations", riccati.linear_iterations},
                {"error_estimate", riccati.error_estimate},
                {"seconds", riccati.seconds}};
  return j;
}

std::string RegulatorReport::brief() const {
  std::ostringstream out;
  out << std::setprecision(8);
  out << "finite-horizon regulator for " << (header.title.empty() ? header.source : header.title) << " over [" << t0
      << ", " << t1 << "]\n";
  out << "weights: " << weights << "\n";
  if (!weights_note.empty()) out << "note: " << weights_note << "\n";
  out << "solver: " << solver_name(riccati.solver) << " (" << riccati.engine << "), " << dense_nodes
      << " nodes, " << riccati.steps << " steps, " << std::setprecision(3) << riccati.seconds << " s\n"
      << std::setprecision(8);
  out << "P(t0) eigenvalues: " << P0_eigenvalues.minCoeff() << " .. " << P0_eigenvalues.maxCoeff() << "\n";
  out << "K(t0) (rows: inputs; columns: states):\n";
  for (Eigen::Index i = 0; i < K0.rows(); ++i)
    out << "  " << std::left << std::setw(8) << inputs[static_cast<std::size_t>(i)] << std::right
        << row_text(K0, i) << "\n";
  out << "gain schedule: " << times.size() << " times from " << times.front() << " to " << times.back() << "\n";
  if (cost_predicted) out << "cost predicted x0'P(t0)x0: " << *cost_predicted << "\n";
  if (const auto& run = closed_loop.run) {
    out << "cost simulated:            " << run->cost_simulated << "  (relative difference "
        << std::setprecision(2)
        << std::abs(run->cost_simulated - *cost_predicted) / std::max(std::abs(*cost_predicted), 1e-300) << ")\n"
        << std::setprecision(8);
    out << "x(t1):";
    for (Eigen::Index i = 0; i < run->x_final.size(); ++i)
      out << " " << states[static_cast<std::size_t>(i)] << "=" << run->x_final(i);
    out << "\n";
  }
  if (const auto& f = closed_loop.floquet)
    out << "closed-loop Floquet multipliers over [" << f->window_start << ", " << f->window_end << "]: |mu| max "
        << f->floquet.largest_modulus << " (" << (f->floquet.stable ? "stable" : "not stable") << ")\n";
  switch (closed_loop.status) {
    case ClosedLoopCheck::Status::Done:
      out << "closed-loop check: ok (" << closed_loop.stats.steps << " steps)\n";
      break;
    case ClosedLoopCheck::Status::Failed:
      out << "closed-loop check: FAILED, " << closed_loop.reason
          << " (the gain schedule is the Riccati solution's and is complete; only its check is missing)\n";
      break;
    case ClosedLoopCheck::Status::Skipped:
      out << "closed-loop check: skipped\n";
      break;
  }
  return out.str();
}

namespace {

// TIMES[k], then the rows of MATS[k], one row a time.
void write_matrix_series(const std::string& path, const std::string& prefix, const std::vector<double>& times,
                         const std::vector<Eigen::MatrixXd>& mats) {
  const Eigen::Index rows = mats.empty() ? 0 : mats.front().rows(), cols = mats.empty() ? 0 : mats.front().cols();
  std::vector<std::string> header{"t"};
  for (const std::string& name : matrix_column_names(prefix, static_cast<int>(rows), static_cast<int>(cols)))
    header.push_back(name);
  CsvWriter csv(path, header);
  std::vector<double> row;
  for (std::size_t k = 0; k < times.size(); ++k) {
    row.assign(1, times[k]);
    append_row_major(row, mats[k]);
    csv.row(row);
  }
  csv.commit();
}

}  // namespace

void write_gain_schedule_csv(const std::string& path, const RegulatorReport& r) {
  write_matrix_series(path, "K", r.times, r.gains);
}

void write_riccati_csv(const std::string& path, const RegulatorReport& r) { write_matrix_series(path, "P", r.times, r.P); }

void write_closed_loop_csv(const std::string& path, const RegulatorReport& r) {
  if (!r.closed_loop.run) throw InputError(path + ": no closed-loop run to write (it needs x0 and the check)");
  const ClosedLoopRun& run = *r.closed_loop.run;
  std::vector<std::string> header{"t"};
  header.insert(header.end(), r.states.begin(), r.states.end());
  header.insert(header.end(), r.inputs.begin(), r.inputs.end());
  CsvWriter csv(path, header);
  Eigen::VectorXd row(run.states.cols() + run.inputs.cols());
  for (std::size_t k = 0; k < run.times.size(); ++k) {
    const Eigen::Index i = static_cast<Eigen::Index>(k);
    row << run.states.row(i).transpose(), run.inputs.row(i).transpose();
    csv.row(run.times[k], row);
  }
  csv.commit();
}

}  // namespace ordex
