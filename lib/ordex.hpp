#pragma once
// The whole public API of ordex in one include: #include <ordex/ordex.hpp>.
//
// What is listed here is what `cmake --install` installs (with the headers these include);
// every other header under lib/ is internal and may change without notice. docs/cpp.md shows a
// complete program.

// Errors: ordex::Error, the base of InputError (bad input) and NumericalError (failure).
#include "io/errors.hpp"
#include "io/json.hpp"

// Systems: the System interface, models written in C++ (FunctionSystem), model files.
#include "model/function_system.hpp"
#include "model/input_selection.hpp"
#include "model/model_file.hpp"
#include "model/system.hpp"

// Transition matrices: options, the engine, Floquet analysis, the propagate job's report.
#include "propagation/floquet.hpp"
#include "propagation/generator.hpp"
#include "propagation/options.hpp"
#include "propagation/propagate_report.hpp"
#include "propagation/propagator.hpp"

// Gramians, minimum-energy transfer, sliding-window profile and their report.
#include "gramian/gramian.hpp"
#include "gramian/profile.hpp"
#include "gramian/report.hpp"
#include "gramian/transfer.hpp"

// Finite-horizon LQR: weights, Riccati solutions (the gain schedule), the regulator job.
#include "riccati/periodic_filter.hpp"
#include "riccati/periodic_regulator.hpp"
#include "riccati/regulator.hpp"
#include "riccati/riccati_solver.hpp"
#include "riccati/weights.hpp"

// Estimation: the Kalman-Bucy filter and covariance analysis on a sensor schedule.
#include "estimation/estimate.hpp"
#include "estimation/noise.hpp"
#include "estimation/periodic_estimate.hpp"
#include "estimation/sensor_schedule.hpp"

// Forced response to input histories and discrete-time models.
#include "response/discretize.hpp"
#include "response/input_history.hpp"
#include "response/respond.hpp"

// Nonlinear plants: model files with [dynamics], the linearization about the nominal (exact
// Jacobians), the linearize and simulate jobs.
#include "nonlinear/linearize.hpp"
#include "nonlinear/nonlinear_model.hpp"
#include "nonlinear/simulate.hpp"
// Sweeps: one job over a parameter grid or seeded random samples, the model's parameters set
// in place (docs/sweep.md).
#include "sweep/sweep.hpp"
