#pragma once
// The jobs a sweep runs at every point, each reduced to its key figures: a fixed list of named
// numbers per point (the columns of the sweep's table). A job object holds its settings (window,
// the job's Options) and is used by one thread; the sweep asks a factory for one per thread.
//
// Adding a job: derive from SweepJob (figure_names, figures, a settings() for the summary),
// give it a make_*_job function here, and a --job choice with its options in ordex-sweep.
#include <functional>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "gramian/report.hpp"
#include "io/json.hpp"
#include "model/system.hpp"
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

}  // namespace ordex
