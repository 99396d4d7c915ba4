#pragma once
// Finite-horizon LQR for x' = A(t) x + B(t) u: the Riccati differential equation
//   -dP/dt = A'P + PA - (PB + N) R^-1 (B'P + N') + Q,  P(t1) = Qf,  K = R^-1 (B'P + N'),
// solved backwards from t1 by one of two methods (docs/riccati.md):
//   RiccatiOde   CVODE BDF on the n(n+1)/2 entries of the upper triangle of P, Newton-GMRES with
//                an exact O(n^3) Lyapunov preconditioner (lyapunov.hpp);
//   Hamiltonian  the engine propagates the 2n x 2n Hamiltonian over each interval of the dense
//                grid, backwards, and the stepwise Davison-Maki recursion
//                P_k = (S21 + S22 P_{k+1}) (S11 + S12 P_{k+1})^-1 carries P.
// Both produce P on the same dense grid; between nodes P(t) is the cubic Hermite interpolant
// of P and dP/dt (the Riccati right-hand side at the node), which the controller uses.
#include <Eigen/Dense>
#include <string>
#include <vector>

#include "model/system.hpp"
#include "propagation/options.hpp"
#include "riccati/weights.hpp"

namespace ordex {

enum class RiccatiSolver {
  RiccatiOde,  ///< "ode": the Riccati equation itself (CVODE BDF, or the probe's scheme_probe.hpp choice)
  Hamiltonian  ///< "hamiltonian": engine + stepwise Davison-Maki recursion
};

/// "ode" or "hamiltonian".
std::string solver_name(RiccatiSolver s);
/// Inverse of solver_name; throws InputError "RiccatiOptions::solver: unknown solver 'x' (choose ode
/// or hamiltonian)".
RiccatiSolver parse_solver(const std::string& name);

struct RiccatiOptions {
  /// Which solver; default RiccatiOde, the faster of the two in bench/bench_riccati.cpp on
  /// every problem there but the non-stiff n = 48 chain at rtol 1e-10, and the one that copes with
  /// stiff plants (docs/performance.md). Hamiltonian is the cross-check.
  RiccatiSolver solver = RiccatiSolver::RiccatiOde;
  /// Engine method and tolerances. The Hamiltonian route hands them to the Propagator; the
  /// ODE route uses rtol and atol, and its scheme is CVODE Adams or BDF when method names one,
  /// otherwise the symmetric matrix service's probe picks BDF or, for a lightly damped plant
  /// oscillating over the horizon, the explicit Runge-Kutta pair (scheme_probe.hpp). Defaults as
  /// PropagationOptions (auto, 1e-8, 1e-10).
  PropagationOptions propagation;
  /// Least number of intervals of the dense grid on which P is stored (each output interval is
  /// split evenly until there are at least this many); default 2000. More intervals make the
  /// Hermite interpolant of P between nodes closer to the true P. Must lie in [1, 10^7].
  int dense_intervals = 2000;
  /// Tolerances of the checks on the weights; defaults in WeightCheckOptions.
  WeightCheckOptions weight_check;
  /// Throws InputError naming the field ("RiccatiOptions::dense_intervals = 0 is outside ...");
  /// the engine and weight-check fields are named by their own structs.
  void validate() const;
};

/// What the solver did.
struct RiccatiStats {
  RiccatiSolver solver = RiccatiSolver::Hamiltonian;
  std::string engine;            ///< "cvode-bdf", "cvode-adams", "rkf78" or the engine method (magnus4, ...)
  long steps = 0;                ///< accepted integrator steps
  long evaluations = 0;          ///< right-hand side or generator evaluations
  long linear_iterations = 0;    ///< GMRES iterations (ODE route)
  double error_estimate = 0.0;   ///< engine's estimate (Hamiltonian route), else 0
  double seconds = 0.0;          ///< wall time of the solve
};

/// P on the dense grid, with its interpolant.
class RiccatiSolution {
 public:
  std::vector<double> nodes;              ///< ascending, nodes.front() = t0, nodes.back() = t1
  std::vector<Eigen::MatrixXd> P;         ///< P at each node
  std::vector<Eigen::MatrixXd> dP_left;   ///< dP/dt at each node from the left (t -> node-)
  std::vector<Eigen::MatrixXd> dP_right;  ///< dP/dt from the right (differs at breakpoints)
  std::vector<std::size_t> output_index;  ///< node index of each requested output time
  RiccatiStats stats;

  /// P(t) for t in [t0, t1]: cubic Hermite between nodes. Allocation-free when OUT has the size.
  void P_at(double t, Eigen::MatrixXd& out) const;
  double t0() const { return nodes.front(); }
  double t1() const { return nodes.back(); }
};

/// Solves the Riccati equation over [t0, t1] (t0 < t1) and returns P on a dense grid that contains
/// every time of OUTPUT_TIMES (ascending, from t0 to t1) and every breakpoint of SYS.
/// Checks the weights first (check_weights on the dense grid: InputError with the first t
/// where one fails). Throws NumericalError on integrator failure, a singular step or non-finite P.
RiccatiSolution solve_riccati(const System& sys, const Weights& w, const std::vector<double>& output_times,
                              const RiccatiOptions& options);

/// The dense grid of solve_riccati (exposed for tests): OUTPUT_TIMES with each interval split
/// evenly so that there are at least DENSE_INTERVALS intervals, plus BREAKPOINTS inside.
/// OUTPUT_INDEX receives the position of each output time in the result.
std::vector<double> dense_grid(const std::vector<double>& output_times, int dense_intervals,
                               const std::vector<double>& breakpoints, std::vector<std::size_t>& output_index);

}  // namespace ordex
