#pragma once
// The estimation job, one library call: estimate(system, t0, t1, options).
//
// Without a sensor schedule it is the Kalman-Bucy filter of
//   x' = A x + B u + G w,  y = C x + v,  E[w w'] = Qn delta,  E[v v'] = Rn delta,  Cov x(t0) = P0:
//   P' = A P + P A' + G Qn G' - P C' Rn^-1 C P,  P(t0) = P0,  L = P C' Rn^-1
// forward in time (Kalman & Bucy 1961; METHODS.md "Estimation"), the gain schedule L(t) on the
// sample grid. With a schedule it is a covariance analysis: between measurements P follows the
// process noise alone (P' = A P + P A' + G Qn G'), and at each scheduled measurement of outputs
// H = rows of C, noise R, it takes the discrete update in Joseph form
//   K = P H' (H P H' + R)^-1,  P+ = (I - K H) P (I - K H)' + K R K'.
// Either way P is carried by one of two routes (covariance_routes.hpp) and, by default, again by
// the other as a cross-check whose agreement the report gives.
#include <Eigen/Dense>
#include <optional>
#include <string>
#include <vector>

#include "estimation/noise.hpp"
#include "estimation/sensor_schedule.hpp"
#include "io/json.hpp"
#include "model/model_report.hpp"
#include "propagation/options.hpp"
#include "riccati/riccati_solver.hpp"

namespace ordex {

struct EstimationOptions {
  /// The noise (Qn and how it enters, Rn, P0); required (no default is sensible).
  std::optional<NoiseModel> noise;
  /// The sensor schedule; default none: the continuous Kalman-Bucy filter. With one, a
  /// covariance analysis with discrete updates (and NoiseModel::Rn is not used).
  std::optional<SensorSchedule> schedule;
  /// The route that gives the results; default RiccatiOde (the symmetric matrix equation
  /// service: CVODE BDF, or the scheme its probe picks, scheme_probe.hpp); Hamiltonian is the linear-fractional route through the engine.
  RiccatiSolver solver = RiccatiSolver::RiccatiOde;
  /// Whether the other route is run too and the agreement reported; default true.
  bool cross_check = true;
  /// Engine method and tolerances (the Hamiltonian route's Propagator; rtol and atol for the
  /// ODE route, whose scheme is adams or bdf when method names one, else the probe's). Defaults as PropagationOptions.
  PropagationOptions propagation;
  /// Least number of intervals of the Hamiltonian route's grid over the window; default 2000.
  /// Must lie in [1, 10^7].
  int dense_intervals = 2000;
  /// Equally spaced times of the gain schedule and sigma history, ends included; default 101.
  /// Must lie in [2, 10^7].
  int samples = 101;
  /// Tolerances of the symmetry and definiteness checks of Qn, Rn, P0 (WeightCheckOptions).
  WeightCheckOptions noise_check;
  /// Throws InputError naming the field ("EstimationOptions::samples = 1 is outside ...").
  void validate() const;
};

/// "kalman-bucy" or "covariance-analysis".
std::string estimation_kind_name(bool covariance_analysis);

struct EstimationReport {
  /// The common header; method is the primary route's engine ("cvode-bdf" or a Magnus method).
  ReportHeader header;
  bool covariance_analysis = false;
  std::string noise_source, noise_path;   ///< the noise file ("code"), how the noise enters
  std::string schedule_source;            ///< the schedule file, "code", or empty
  std::vector<std::string> states, outputs;
  double t0 = 0, t1 = 0;
  RiccatiSolver solver = RiccatiSolver::RiccatiOde;
  std::string engine;                     ///< the primary route's engine
  long steps = 0, evaluations = 0;        ///< the primary route's counts
  double seconds = 0;                     ///< wall time of both routes
  /// The cross-check: max over the history of |P - P_other| (Frobenius) over the largest |P|;
  /// unset when not run.
  std::optional<double> agreement;
  std::string check_engine;               ///< the other route's engine
  /// Why the cross-check failed (the other route's numerical failure); empty otherwise. The
  /// results are the primary route's either way.
  std::string check_failure;
  Eigen::MatrixXd P0, P_final;            ///< P(t0), P(t1) (after any update at t1)
  Eigen::VectorXd sigma_final;            ///< sqrt of the diagonal of P_final
  /// The gain schedule, L = n x p with a column per model output: the Kalman-Bucy gain
  /// P C' Rn^-1 at each sample time, or the Joseph-form update gain K of each scheduled update
  /// (zero in the columns of the outputs it does not measure).
  std::vector<double> gain_times;
  std::vector<Eigen::MatrixXd> gains;
  /// The history: P and sigma at each sample time; in a covariance analysis also before and
  /// after each update time (two rows with the same t).
  std::vector<double> history_times;
  std::vector<Eigen::MatrixXd> P;
  std::vector<Eigen::VectorXd> sigma;
  std::size_t updates = 0;                ///< measurement updates applied
  /// The periodic steady state (estimate_periodic, periodic_estimate.hpp): period, passes,
  /// periodicity_gap, x1_rcond, closed_loop_floquet and open_loop_floquet (of A - L C and A),
  /// note; null for the filter over a window and the covariance analysis.
  Json periodic;

  /// The summary: the common header, kind, solver, cross_check = {solver, status (ok or failed),
  /// engine, agreement, reason} (null when not run),
  /// noise = {source, enters_through}, schedule = {source, updates}, states, outputs, P0,
  /// P_final, sigma_final (in state order), L0 (the first gain, null when none),
  /// gain_schedule = {times, L}, stats. The app adds "app" and "caution".
  Json to_json() const;
  std::string brief() const;
};

/// The Joseph-form update of P (n x n) by a measurement y = H x + v, Cov v = R (k x k):
/// K = P H' (H P H' + R)^-1, (I - K H) P (I - K H)' + K R K'. K receives the gain when not null.
/// Throws NumericalError when H P H' + R is not positive definite.
Eigen::MatrixXd joseph_update(const Eigen::MatrixXd& P, const Eigen::MatrixXd& H, const Eigen::MatrixXd& R,
                              Eigen::MatrixXd* K = nullptr);

/// The gain schedule as CSV t,L_1_1,...,L_n_p (row-major, 1-based), written atomically.
void write_estimator_gain_csv(const std::string& path, const EstimationReport& report);
/// The sigma history as CSV t,sigma_<state>,..., written atomically.
void write_sigma_csv(const std::string& path, const EstimationReport& report);

/// The estimation job over [T0, T1] (T1 > T0). Throws InputError for bad options, noise or
/// schedule (naming the field, file and key), NumericalError when a route fails.
EstimationReport estimate(const System& sys, double t0, double t1, const EstimationOptions& options);

}  // namespace ordex
