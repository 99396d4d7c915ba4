#pragma once
// The periodic regulator job (ordex-regulate --periodic): the stabilizing periodic solution of
// the regulator's Riccati equation (periodic_riccati.hpp) over one period [t0, t0 + T], its gain
// schedule K(t) = R^-1 (B'P + N'), and the closed-loop Floquet multipliers of A - B K(t) that
// show it stabilizes (the regulator job's closed-loop check over exactly one period).
#include <string>

#include "io/json.hpp"
#include "riccati/periodic_riccati.hpp"
#include "riccati/regulator.hpp"

namespace ordex {

struct PeriodicRegulatorReport {
  /// The schedule over one period, from P(t0 + T) = P(t0): P0, K0, the gains on the samples,
  /// the closed-loop check (its Floquet multipliers are over exactly one period; with x0 the
  /// simulated cost over one period, terminal term x(t0+T)' P(t0) x(t0+T), equals x0' P0 x0).
  RegulatorReport regulator;
  PeriodicSteadyState steady;

  /// The regulator's summary with "periodic" = {period, passes, periodicity_gap,
  /// first_periodicity_gap, x1_rcond, hamiltonian_multipliers, monodromy_norm, note},
  /// "open_loop_floquet" and "floquet" (closed loop).
  Json to_json() const;
  std::string brief() const;
};

/// The periodic steady-state regulator of SYS (which must declare a period) from T0 over one
/// period, with OPTIONS as for regulate (samples over the period; the weights' Qf is not used).
/// Throws InputError (no period, bad options or weights), NumericalError (no stabilizing
/// solution, naming the multiplier; the periodicity check failed).
PeriodicRegulatorReport regulate_periodic(const System& sys, double t0, const RegulatorOptions& options = {},
                                          const PeriodicOptions& periodic = {});

/// Floquet multipliers as JSON [{re, im, abs}, ...].
Json multipliers_json(const Eigen::VectorXcd& mu);

}  // namespace ordex
