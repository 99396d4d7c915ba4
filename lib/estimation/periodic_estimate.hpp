#pragma once
// The periodic steady-state Kalman-Bucy filter as an estimation job (ordex-estimate --periodic):
// riccati/periodic_filter.hpp on the noise of EstimationOptions, reported as an EstimationReport
// over one period, with the Floquet multipliers of the filter's error dynamics A - L C.
#include "estimation/estimate.hpp"
#include "riccati/periodic_riccati.hpp"

namespace ordex {

/// The filter gain that is periodic and stabilizing for all time, over [T0, T0 + period] of SYS
/// (which must have a period and outputs). OPTIONS.noise must hold Rn; a sensor schedule is
/// refused (the steady state is the continuous filter's); OPTIONS.cross_check does not apply
/// (the periodicity check after one period stands in for it). The report's P0 is the periodic
/// P(t0), P_final = P(t0 + period), the gain schedule L(t) is on OPTIONS.samples times, and
/// `periodic` (in the JSON) holds the multipliers and the check. Throws InputError (bad noise, no
/// period, no outputs), NumericalError (not detectable: names the multiplier the outputs
/// cannot see).
EstimationReport estimate_periodic(const System& sys, double t0, const EstimationOptions& options,
                                   const PeriodicOptions& periodic = {});

}  // namespace ordex
