#include "riccati/riccati_solver.hpp"

#include <algorithm>
#include <chrono>
#include <cmath>

#include "io/errors.hpp"
#include "riccati/lqr_coefficients.hpp"
#include "riccati/riccati_routes.hpp"

namespace ordex {

std::string solver_name(RiccatiSolver s) { return s == RiccatiSolver::RiccatiOde ? "ode" : "hamiltonian"; }

RiccatiSolver parse_solver(const std::string& name) {
  if (name == "ode") return RiccatiSolver::RiccatiOde;
  if (name == "hamiltonian") return RiccatiSolver::Hamiltonian;
  throw InputError("RiccatiOptions::solver: unknown solver '" + name + "' (choose ode or hamiltonian)");
}

void RiccatiOptions::validate() const {
  propagation.validate();
  weight_check.validate();
  if (dense_intervals < 1 || dense_intervals > 10000000)
    throw InputError("RiccatiOptions::dense_intervals = " + std::to_string(dense_intervals) +
                     " is outside [1, 10000000]");
}

namespace riccati_detail {

void require_finite_matrix(const Eigen::MatrixXd& x, const std::string& what, double t) {
  if (!x.allFinite()) throw NumericalError(what + " is not finite at t = " + format_number(t));
}

}  // namespace riccati_detail

using namespace riccati_detail;

std::vector<double> dense_grid(const std::vector<double>& output_times, int dense_intervals,
                               const std::vector<double>& breakpoints, std::vector<std::size_t>& output_index) {
  const std::size_t intervals = output_times.size() - 1;
  const std::size_t split =
      std::max<std::size_t>(1, (static_cast<std::size_t>(dense_intervals) + intervals - 1) / intervals);
  std::vector<double> grid;
  grid.reserve(intervals * split + 1 + breakpoints.size());
  for (std::size_t k = 0; k < intervals; ++k) {
    const double a = output_times[k], b = output_times[k + 1];
    for (std::size_t s = 0; s < split; ++s) grid.push_back(a + (b - a) * static_cast<double>(s) / split);
  }
  grid.push_back(output_times.back());
  const double span = output_times.back() - output_times.front();
  for (double bp : breakpoints)
    if (bp > output_times.front() && bp < output_times.back()) grid.push_back(bp);
  std::sort(grid.begin(), grid.end());
  // Merge near-duplicates (a breakpoint on an output time) so that no interval is degenerate.
  std::vector<double> merged;
  for (double t : grid)
    if (merged.empty() || t - merged.back() > 1e-12 * span) merged.push_back(t);
  merged.back() = output_times.back();
  output_index.clear();
  std::size_t pos = 0;
  for (double t : output_times) {
    while (pos + 1 < merged.size() && std::abs(merged[pos] - t) > std::abs(merged[pos + 1] - t)) ++pos;
    output_index.push_back(pos);
  }
  return merged;
}

void RiccatiSolution::P_at(double t, Eigen::MatrixXd& out) const {
  const std::size_t last = nodes.size() - 1;
  if (t <= nodes.front()) {
    out = P.front();
    return;
  }
  if (t >= nodes.back()) {
    out = P.back();
    return;
  }
  std::size_t k = static_cast<std::size_t>(std::upper_bound(nodes.begin(), nodes.end(), t) - nodes.begin()) - 1;
  k = std::min(k, last - 1);
  const double a = nodes[k], h = nodes[k + 1] - a, s = (t - a) / h;
  const double s2 = s * s, s3 = s2 * s;
  const double h00 = 2 * s3 - 3 * s2 + 1, h10 = s3 - 2 * s2 + s, h01 = -2 * s3 + 3 * s2, h11 = s3 - s2;
  out = h00 * P[k] + (h10 * h) * dP_right[k] + h01 * P[k + 1] + (h11 * h) * dP_left[k + 1];
}

RiccatiSolution solve_riccati(const System& sys, const Weights& w, const std::vector<double>& output_times,
                              const RiccatiOptions& options) {
  options.validate();
  if (output_times.size() < 2) throw InputError("Riccati solver: at least two output times are needed");
  const double t0 = output_times.front(), t1 = output_times.back();
  if (!(t1 > t0))
    throw InputError("Riccati solver: the horizon must run forward (t1 = " + format_number(t1) +
                     " is not later than t0 = " + format_number(t0) + ")");
  for (std::size_t k = 1; k < output_times.size(); ++k)
    if (!(output_times[k] > output_times[k - 1]))
      throw InputError("Riccati solver: output times must be strictly increasing");
  const int n = sys.states(), m = sys.inputs();

  RiccatiSolution sol;
  sol.nodes = dense_grid(output_times, options.dense_intervals, sys.breakpoints_between(t0, t1), sol.output_index);
  check_weights(w, n, m, sol.nodes, t1, options.weight_check);

  const std::size_t count = sol.nodes.size();
  sol.P.assign(count, Eigen::MatrixXd::Zero(n, n));
  const auto start = std::chrono::steady_clock::now();
  if (options.solver == RiccatiSolver::RiccatiOde)
    solve_by_riccati_ode(sys, w, options, sol);
  else
    solve_by_hamiltonian(sys, w, options, sol);

  // dP/dt at every node from the Riccati right-hand side; at a breakpoint the two one-sided
  // values come from the coefficients just before and just after it.
  LqrCoefficients coeff(sys, w);
  Eigen::MatrixXd K(m, n);
  sol.dP_left.assign(count, Eigen::MatrixXd::Zero(n, n));
  sol.dP_right.assign(count, Eigen::MatrixXd::Zero(n, n));
  const std::vector<double> bps = sys.breakpoints_between(t0, t1);
  const double nudge = 1e-9 * std::max(1.0, std::max(std::abs(t0), std::abs(t1)));
  for (std::size_t i = 0; i < count; ++i) {
    const double t = sol.nodes[i];
    const bool at_breakpoint = std::any_of(bps.begin(), bps.end(), [&](double b) { return std::abs(b - t) <= nudge; });
    coeff.at(at_breakpoint ? t - nudge : t);
    coeff.riccati_rhs(sol.P[i], sol.dP_left[i], K);
    if (at_breakpoint) {
      coeff.at(t + nudge);
      coeff.riccati_rhs(sol.P[i], sol.dP_right[i], K);
    } else {
      sol.dP_right[i] = sol.dP_left[i];
    }
    require_finite_matrix(sol.dP_left[i], "dP/dt", t);
    require_finite_matrix(sol.dP_right[i], "dP/dt", t);
  }
  sol.stats.solver = options.solver;
  sol.stats.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  return sol;
}

}  // namespace ordex
