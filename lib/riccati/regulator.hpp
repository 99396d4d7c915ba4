#pragma once
// What ordex-regulate computes, as a library call: the Riccati solution, the gains at t0, the
// closed-loop transition matrix (and its Floquet multipliers for a periodic model over whole
// periods) and, from an initial state, the simulated closed-loop run and its cost.
#include <Eigen/Dense>
#include <optional>
#include <ostream>
#include <string>
#include <vector>

#include "io/json.hpp"
#include "propagation/floquet.hpp"
#include "riccati/closed_loop.hpp"
#include "riccati/riccati_solver.hpp"

namespace ordex {

struct RegulatorOptions {
  /// Solver, engine options, dense grid and weight checks (RiccatiOptions).
  RiccatiOptions riccati;
  /// Tolerances of the closed-loop simulation (ClosedLoopOptions).
  ClosedLoopOptions closed_loop;
  /// Initial state of the closed-loop run; default none (no run, no costs).
  std::optional<Eigen::VectorXd> x0;
  /// Throws InputError naming the option when a field is out of range.
  void validate() const;
};

/// Closed-loop Floquet multipliers over the first period [t0, t0 + T] of the horizon.
struct ClosedLoopFloquet {
  double window_start = 0, window_end = 0;
  FloquetReport floquet;
};

struct RegulatorReport {
  std::string model;                     ///< model source
  std::string weights;                   ///< weights source
  std::vector<std::string> states, inputs;
  double t0 = 0, t1 = 0;
  std::size_t samples = 0;               ///< output times
  std::size_t dense_nodes = 0;           ///< nodes of the dense grid
  RiccatiStats riccati;                  ///< solver counts
  Eigen::MatrixXd P0, K0;                ///< P(t0), K(t0)
  Eigen::VectorXd P0_eigenvalues;        ///< ascending
  Eigen::MatrixXd closed_loop_phi;       ///< Phi_cl(t1, t0)
  PropagationStats closed_loop_stats;    ///< engine counts for closed_loop_phi
  std::optional<ClosedLoopFloquet> floquet;
  std::optional<ClosedLoopRun> run;      ///< with x0
  double closed_loop_agreement = 0;      ///< |Phi_cl x0 - x_final| / max(|x_final|, tiny) (with x0)

  /// The summary of CONTRACT.md (P0, K0, cost_predicted, cost_simulated, x_final) plus
  /// app, solver, engine method, closed-loop matrix, Floquet multipliers and stats.
  Json to_json() const;
  /// A short human-readable report (the app adds the hardware caution).
  void print(std::ostream& out) const;
};

/// Solves the LQR problem of SYS and W on OUTPUT_TIMES (ascending, t0 .. t1) and evaluates the
/// closed loop. SOLUTION receives the Riccati solution (for the gain schedule CSV).
RegulatorReport regulate(const System& sys, const Weights& w, const std::vector<double>& output_times,
                         const RegulatorOptions& options, RiccatiSolution& solution);

}  // namespace ordex
