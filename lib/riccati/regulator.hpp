#pragma once
// The regulator job, one library call: regulate(system, t0, t1, options) solves the finite-horizon
// LQR problem, samples the gain schedule K(t) on the output grid, and checks the regulator in
// closed loop (transition matrix Phi_cl(t1, t0), Floquet multipliers over the first period of a
// periodic plant, and from x0 the simulated run and its cost). The check has a bounded cost
// (RegulatorOptions::check_max_steps); when it fails the gains are still returned and the report
// says the check failed and why (ClosedLoopCheck::status, reason).
#include <Eigen/Dense>
#include <functional>
#include <optional>
#include <string>
#include <vector>

#include "io/json.hpp"
#include "model/model_report.hpp"
#include "propagation/floquet.hpp"
#include "riccati/closed_loop.hpp"
#include "riccati/riccati_solver.hpp"

namespace ordex {

struct RegulatorOptions {
  /// The weights of the cost; default none: Q = I, R = I, Qf = 0, N = 0 (default_weights).
  std::optional<Weights> weights;
  /// Solver, engine method and tolerances, dense grid and weight checks (RiccatiOptions).
  RiccatiOptions riccati;
  /// Equally spaced times of the gain schedule in [t0, t1], both ends included; default 101.
  /// Must lie in [2, 10^7].
  int samples = 101;
  /// Whether the regulator is checked in closed loop (Phi_cl, Floquet, the run from x0);
  /// default true. Without the check there is no run and no simulated cost.
  bool check_closed_loop = true;
  /// Step budget of each part of the closed-loop check (the transition matrix and the run from
  /// x0): a part that needs more steps stops and the check is reported failed, so it never grinds;
  /// default 200000 (a few seconds for tens of states). Must lie in [100, 10^9].
  long check_max_steps = 200000;
  /// Tolerances of the closed-loop run from x0 (ClosedLoopOptions).
  ClosedLoopOptions closed_loop;
  /// Initial state of the closed-loop run; default none (no run, no costs). Its size must be the
  /// number of states and its entries finite.
  std::optional<Eigen::VectorXd> x0;
  /// Called with each sample of the schedule as it is evaluated: index k, time, K (m x n) and
  /// P (n x n), for writing it to a file as it comes; default none.
  std::function<void(std::size_t k, double t, const Eigen::MatrixXd& K, const Eigen::MatrixXd& P)> on_sample;
  /// Whether the report keeps the schedule (RegulatorReport::gains and P, listed by to_json and
  /// the CSV writers); default true. False (with on_sample) leaves them empty; K0 and P0 stay.
  bool keep_schedule = true;
  /// Throws InputError naming the field ("RegulatorOptions::samples = 1 is outside [2, 10000000]").
  void validate() const;
};

/// Closed-loop Floquet multipliers over the first period [t0, t0 + T] of the horizon.
struct ClosedLoopFloquet {
  double window_start = 0, window_end = 0;
  FloquetReport floquet;
};

/// The closed-loop check and what it found.
struct ClosedLoopCheck {
  enum class Status {
    Done,     ///< every part ran ("ok")
    Failed,   ///< a part failed (integration failure, non-finite values, step budget); see reason
    Skipped   ///< not asked for (RegulatorOptions::check_closed_loop = false)
  };
  Status status = Status::Skipped;
  std::string reason;                 ///< Failed: what failed, where, and the engine's message
  std::optional<Eigen::MatrixXd> phi; ///< Phi_cl(t1, t0) of A - B K(t), when computed
  PropagationStats stats;             ///< engine counts of phi
  std::optional<ClosedLoopFloquet> floquet;  ///< periodic plant over whole periods
  std::optional<ClosedLoopRun> run;   ///< from x0, when computed
  /// |Phi_cl x0 - x_final| / |x_final| (with phi and run), NaN otherwise.
  double agreement = 0;
};

/// "ok", "failed" or "skipped".
std::string check_status_name(ClosedLoopCheck::Status s);

struct RegulatorReport {
  /// The common header: the model (title, source, parameters in effect), t0, t1 and the method
  /// (the Riccati solver's engine: "cvode-bdf" or the Magnus method used).
  ReportHeader header;
  std::string weights;                   ///< weights source ("defaults", "code" or a file)
  std::string weights_note;              ///< Weights::note (keys left to their defaults), or empty
  std::vector<std::string> states, inputs;
  double t0 = 0, t1 = 0;
  std::size_t dense_nodes = 0;           ///< nodes of the dense grid
  RiccatiStats riccati;                  ///< solver counts
  Eigen::MatrixXd P0, K0;                ///< P(t0), K(t0)
  Eigen::VectorXd P0_eigenvalues;        ///< ascending
  /// The gain schedule: K(times[k]) = gains[k] (m x n), from the solver's dense P (Hermite
  /// between nodes) and the plant and weights at that time, as a controller would apply it.
  std::vector<double> times;
  std::vector<Eigen::MatrixXd> gains;
  std::vector<Eigen::MatrixXd> P;        ///< P(times[k]) (n x n), the dense grid's node values
  ClosedLoopCheck closed_loop;
  /// Cost x0' P(t0) x0 of the optimal run (with x0), whether or not the check ran.
  std::optional<double> cost_predicted;

  /// The summary: the common header (ordex_version, model, t0, t1, method), then solver,
  /// P0, K0, gain_schedule = {times, K}, cost_predicted, cost_simulated, x_final,
  /// closed_loop = {status, reason, phi, agreement}, floquet, stats. Keys of a failed check's
  /// missing parts are null. The app adds "app" and "caution".
  Json to_json() const;
  /// A short human-readable report; says so when the closed-loop check failed.
  std::string brief() const;
};

/// The gain schedule of REPORT as CSV t,K_1_1,...,K_m_n (row-major, 1-based), written atomically.
void write_gain_schedule_csv(const std::string& path, const RegulatorReport& report);
/// P on the schedule's times as CSV t,P_1_1,...,P_n_n, written atomically.
void write_riccati_csv(const std::string& path, const RegulatorReport& report);
/// The closed-loop run from x0 as CSV t,<states>,<inputs>, written atomically; InputError when the
/// report has no run (no x0, or the check failed).
void write_closed_loop_csv(const std::string& path, const RegulatorReport& report);

/// The regulator job: the LQR problem of SYS over [T0, T1] with OPTIONS. Throws InputError for
/// bad options or weights (naming the field or the weights key), NumericalError when the Riccati
/// solve fails. A failing closed-loop check does not throw: see RegulatorReport::closed_loop.
RegulatorReport regulate(const System& sys, double t0, double t1, const RegulatorOptions& options = {});

}  // namespace ordex
