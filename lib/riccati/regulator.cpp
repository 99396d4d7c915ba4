#include "riccati/regulator.hpp"

#include <cmath>
#include <iomanip>
#include <sstream>

#include "io/errors.hpp"
#include "riccati/riccati_routes.hpp"

namespace ordex {

using riccati_detail::require_finite_matrix;

void RegulatorOptions::validate() const {
  riccati.validate();
  closed_loop.validate();
  if (x0 && !x0->allFinite()) throw InputError("--x0: entries must be finite");
}

RegulatorReport regulate(const System& sys, const Weights& w, const std::vector<double>& output_times,
                         const RegulatorOptions& options, RiccatiSolution& solution) {
  options.validate();
  solution = solve_riccati(sys, w, output_times, options.riccati);
  RegulatorReport r;
  const SystemInfo& info = sys.info();
  r.model = info.source;
  r.weights = w.source;
  r.states = info.state_names;
  r.inputs = info.input_names;
  r.t0 = solution.t0();
  r.t1 = solution.t1();
  r.samples = output_times.size();
  r.dense_nodes = solution.nodes.size();
  r.riccati = solution.stats;
  r.P0 = solution.P.front();
  GainEvaluator gains(sys, w, solution);
  r.K0.resize(sys.inputs(), sys.states());
  gains.K_at(r.t0, r.K0);
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> es(r.P0, Eigen::EigenvaluesOnly);
  r.P0_eigenvalues = es.eigenvalues();

  const PropagationOptions& engine = options.riccati.propagation;
  r.closed_loop_phi = closed_loop_transition(sys, w, solution, r.t0, r.t1, engine, &r.closed_loop_stats);
  require_finite_matrix(r.closed_loop_phi, "closed-loop transition matrix", r.t1);

  // A periodic plant over whole periods: the closed loop's multipliers over the first period,
  // where a long horizon's gains are close to the periodic steady-state regulator.
  if (info.period) {
    const double T = *info.period;
    const double periods = (r.t1 - r.t0) / T;
    const double whole = std::round(periods);
    if (whole >= 1 && std::abs(periods - whole) <= 1e-9 * std::max(1.0, periods)) {
      ClosedLoopFloquet f;
      f.window_start = r.t0;
      f.window_end = whole == 1 ? r.t1 : r.t0 + T;
      const Eigen::MatrixXd M =
          whole == 1 ? r.closed_loop_phi : closed_loop_transition(sys, w, solution, r.t0, f.window_end, engine);
      f.floquet = floquet_analysis(M, T);
      r.floquet = f;
    }
  }

  if (options.x0) {
    r.run = simulate_closed_loop(sys, w, solution, *options.x0, output_times, options.closed_loop);
    const Eigen::VectorXd via_phi = r.closed_loop_phi * *options.x0;
    r.closed_loop_agreement = (via_phi - r.run->x_final).norm() / std::max(r.run->x_final.norm(), 1e-300);
  }
  return r;
}

namespace {

Json names_json(const std::vector<std::string>& v) {
  Json j = Json::array();
  for (const auto& s : v) j.push_back(s);
  return j;
}

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
  Json j;
  j["app"] = "ordex-regulate";
  j["model"] = model;
  j["weights"] = weights;
  j["t0"] = t0;
  j["t1"] = t1;
  j["states"] = names_json(states);
  j["inputs"] = names_json(inputs);
  j["solver"] = solver_name(riccati.solver);
  j["method"] = riccati.engine;
  j["samples"] = samples;
  j["dense_nodes"] = dense_nodes;
  j["P0"] = ordex::to_json(P0);
  j["K0"] = ordex::to_json(K0);
  j["P0_eigenvalues"] = vector_to_json(P0_eigenvalues);
  j["closed_loop_phi"] = ordex::to_json(closed_loop_phi);
  if (run) {
    j["x0"] = vector_to_json(run->x0);
    j["cost_predicted"] = number_to_json(run->cost_predicted);
    j["cost_simulated"] = number_to_json(run->cost_simulated);
    j["cost_relative_difference"] = number_to_json(std::abs(run->cost_simulated - run->cost_predicted) /
                                                   std::max(std::abs(run->cost_predicted), 1e-300));
    j["x_final"] = vector_to_json(run->x_final);
    j["closed_loop_agreement"] = number_to_json(closed_loop_agreement);
  }
  if (floquet) j["floquet"] = floquet_json(*floquet);
  j["stats"] = {{"steps", riccati.steps},
                {"evaluations", riccati.evaluations},
                {"linear_iterations", riccati.linear_iterations},
                {"error_estimate", riccati.error_estimate},
                {"seconds", riccati.seconds},
                {"closed_loop_steps", closed_loop_stats.steps}};
  if (run) j["stats"]["simulation_steps"] = run->stats.steps;
  return j;
}

void RegulatorReport::print(std::ostream& out) const {
  out << std::setprecision(8);
  out << "finite-horizon regulator for " << model << " over [" << t0 << ", " << t1 << "]\n";
  out << "weights: " << weights << "\n";
  out << "solver: " << solver_name(riccati.solver) << " (" << riccati.engine << "), " << dense_nodes
      << " nodes, " << riccati.steps << " steps, " << std::setprecision(3) << riccati.seconds << " s\n"
      << std::setprecision(8);
  out << "P(t0) eigenvalues: " << P0_eigenvalues.minCoeff() << " .. " << P0_eigenvalues.maxCoeff() << "\n";
  out << "K(t0) (rows: inputs; columns: states):\n";
  for (Eigen::Index i = 0; i < K0.rows(); ++i)
    out << "  " << std::left << std::setw(8) << inputs[static_cast<std::size_t>(i)] << std::right
        << row_text(K0, i) << "\n";
  if (run) {
    out << "cost predicted x0'P(t0)x0: " << run->cost_predicted << "\n";
    out << "cost simulated:            " << run->cost_simulated << "  (relative difference "
        << std::setprecision(2)
        << std::abs(run->cost_simulated - run->cost_predicted) / std::max(std::abs(run->cost_predicted), 1e-300)
        << ")\n"
        << std::setprecision(8);
    out << "x(t1):";
    for (Eigen::Index i = 0; i < run->x_final.size(); ++i)
      out << " " << states[static_cast<std::size_t>(i)] << "=" << run->x_final(i);
    out << "\n";
  }
  if (floquet) {
    out << "closed-loop Floquet multipliers over [" << floquet->window_start << ", " << floquet->window_end
        << "]: |mu| max " << floquet->floquet.largest_modulus << " ("
        << (floquet->floquet.stable ? "stable" : "not stable") << ")\n";
  }
}

}  // namespace ordex
