#pragma once
// The jobs a sweep runs at every point, each reduced to its key figures: a fixed list of named
// numbers per point (the columns of the sweep's table). A job object holds its settings (window,
// the job's Options) and is used by one thread; the sweep asks a factory for one per thread.
//
// Adding a job: derive from SweepJob (figure_names, figures, a settings() for the summary),
// give it a make_*_job function here, and a --job choice with its options in ordex-sweep.
#include <cstdint>
#include <functional>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "gramian/report.hpp"
#include "io/json.hpp"
#include "model/system.hpp"
#include "nonlinear/simulate.hpp"
#include "propagation/options.hpp"
#include "response/input_history.hpp"
#include "response/respond.hpp"
#include "riccati/regulator.hpp"

namespace ordex {

class SweepJob {
 public:
  virtual ~SweepJob() = default;
  /// "floquet", "gramian", ...
  virtual std::string name() const = 0;
  /// The window the job runs on.
  virtual double t0() const = 0;
  virtual double t1() const = 0;
  /// The names of the key figures for a system like SYS (they may name its states).
  virtual std::vector<std::string> figure_names(const System& sys) const = 0;
  /// The key figures of SYS as it is now (figure_names order). Throws Error (or any exception)
  /// when the point fails; the sweep records the message.
  virtual std::vector<double> figures(const System& sys) const = 0;
  /// The job's settings for the sweep's summary.
  virtual Json settings() const = 0;
  /// The integration method the job uses on a system like SYS (the summary header's method):
  /// by default settings()' method as requested; a job whose engine resolves "auto" by a rule
  /// it can apply without integrating names the method that rule picks.
  virtual std::string method(const System& sys) const;
  /// The key figures at point K whose swept parameters take VALUES. By default SYS (an
  /// ExpressionSystem from make_sweep_system) takes VALUES and figures(SYS) gives them; a job
  /// on another kind of model (simulate) overrides this and ignores SYS.
  virtual std::vector<double> point_figures(System& sys, const std::vector<double>& values, std::size_t k) const;
};

/// Makes one job per thread (jobs may hold state that must not be shared, such as weights with
/// expressions of t).
using SweepJobFactory = std::function<std::unique_ptr<SweepJob>()>;

/// Floquet multipliers over one period from T0 (the period is fixed at load): figures
/// max_abs_multiplier and stable (1 asymptotically stable, 0 not).
std::unique_ptr<SweepJob> make_floquet_job(const System& sys, double t0, const PropagationOptions& propagation);

/// The Gramian over [T0, T1]: rank, lambda_min, lambda_max, condition, then the weakest
/// direction's entries weakest_<state>. OPTIONS' transfer and profile are not used; its threads
/// are set to 1 (the sweep parallelizes over points).
std::unique_ptr<SweepJob> make_gramian_job(double t0, double t1, GramianJobOptions options);

/// The regulator over [T0, T1]: p0_max_eigenvalue (the largest eigenvalue of P(t0)), with x0
/// cost (x0' P(t0) x0), then with the closed-loop check closed_loop_ok (1 every part ran, 0 a
/// part failed) and, for a periodic model whose horizon holds a period,
/// closed_loop_max_abs_multiplier (NaN where the check gives none).
std::unique_ptr<SweepJob> make_regulate_job(const System& sys, double t0, double t1, RegulatorOptions options);

/// The response to HISTORY (or the free response when the model has no inputs and HISTORY is
/// empty) over [T0, T1]: the final state, columns final_<state>.
std::unique_ptr<SweepJob> make_respond_job(double t0, double t1, std::optional<InputHistory> history, RespondOptions options);

/// A simulate batch at every point (lib/nonlinear/simulate.hpp) on MODEL with the parameters
/// SWEPT (names) at the point's values: MODEL's definition is copied with those values (no file
/// is read again), and an integrated nominal is integrated again from nominal_x0 with them, so
/// that the nominal, its input and the linearization are those of the point. A swept parameter
/// that nominal.x0 uses is refused (InputError naming it). The batch's seed at point k is
/// point_seed(SEED, k); OPTIONS.threads is set to 1 (the sweep parallelizes over points).
/// Figures: runs_completed, runs_failed, final_mean_<state> (the mean final state),
/// final_deviation_mean, final_deviation_max (of |x(t1) - x_n(t1)|), peak_deviation_max,
/// peak_input_max, cost_mean; a point whose every run fails throws the first run's failure.
std::unique_ptr<SweepJob> make_simulate_job(std::shared_ptr<const NonlinearModel> model,
                                            const std::vector<std::string>& swept, SimulateOptions options,
                                            std::uint64_t seed);
/// The seed of point K's batch in a sweep seeded with SEED (a mix of both, the same on every
/// thread and rank).
std::uint64_t point_seed(std::uint64_t seed, std::size_t k);

}  // namespace ordex
