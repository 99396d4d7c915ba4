#pragma once
// The periodic steady-state Kalman-Bucy filter (docs/periodic.md): the stabilizing periodic
// solution of the filter's Riccati equation
//   dP/dt = A P + P A' + V - P C' Rn^-1 C P,   V = G Qn G',   L = P C' Rn^-1,
// by duality with the regulator: with s = -t, the plant x' = A(-s)' x + C(-s)' u and the
// weights Q = V(-s), R = Rn(-s) give a regulator whose periodic P_d(s) is P(-s), whose gain
// K_d(s) is L(-s)', and whose closed-loop multipliers are those of A - L C (the dual loop's
// monodromy is the transpose of A - L C's over the same period).
#include <Eigen/Dense>
#include <vector>

#include "propagation/floquet.hpp"
#include "riccati/periodic_riccati.hpp"

namespace ordex {

struct PeriodicFilterOptions {
  /// Solver, engine and tolerances (as for the regulator; RiccatiOptions).
  RiccatiOptions riccati;
  /// Equally spaced times over one period, both ends included; default 101. Must lie in
  /// [2, 10^7].
  int samples = 101;
  /// The steady-state search (unit-circle margin, periodicity check).
  PeriodicOptions periodic;
  /// Throws InputError naming the field.
  void validate() const;
};

struct PeriodicFilterSolution {
  double t0 = 0, period = 0;
  std::vector<double> times;          ///< ascending over [t0, t0 + T]
  std::vector<Eigen::MatrixXd> P;     ///< the periodic error covariance at times (n x n)
  std::vector<Eigen::MatrixXd> L;     ///< the gain P C' Rn^-1 at times (n x p)
  Eigen::MatrixXd P0, L0;             ///< at t0
  FloquetReport closed_loop;          ///< multipliers of A - L(t) C(t) over one period
  FloquetReport open_loop;            ///< multipliers of A
  /// The dual problem's steady state (passes, gaps, Hamiltonian multipliers: diagnostics).
  PeriodicSteadyState steady;
};

/// The periodic steady-state filter of SYS (with a period and outputs) from T0 over one period.
/// PROCESS is the process noise intensity as it enters the states, G Qn G' (n x n, symmetric
/// PSD); MEASUREMENT is Rn (p x p, positive definite); either may vary with t (periodically).
/// Both must outlive the call. Throws InputError (no period, no outputs, bad sizes or
/// intensities, naming their WeightMatrix names), NumericalError (not detectable: names the
/// open-loop multiplier the outputs cannot see; periodicity check failed).
PeriodicFilterSolution periodic_filter(const System& sys, double t0, const WeightMatrix& process,
                                       const WeightMatrix& measurement, const PeriodicFilterOptions& options = {});

}  // namespace ordex
