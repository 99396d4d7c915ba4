#pragma once
// A sweep: one job at every point of a grid or sample plan, on a model parsed once whose swept
// parameters are free (ExpressionSystem::set_parameters). Each point's key figures, or the
// message of its failure, become one row of a table in point order; a failing point never stops
// the others. The table is the same, byte for byte, whatever the number of threads (or, in
// ordex-sweep, of MPI ranks): each point depends only on its values, rows are written in order,
// and numbers are printed in their shortest round-trip form.
//
//   auto base = ordex::make_sweep_system(*ordex::load_model("m.toml"), points.names());
//   ordex::run_points_on_threads(*base, factory, points, todo, 2, [&](std::size_t k, const ordex::PointResult& r) {...});
#include <cstddef>
#include <functional>
#include <map>
#include <memory>
#include <string>
#include <vector>

#include "io/json.hpp"
#include "model/expression_system.hpp"
#include "model/model_report.hpp"
#include "sweep/sweep_jobs.hpp"
#include "sweep/sweep_points.hpp"

namespace ordex {

/// The outcome of one point: the job's figures (NaN where it failed) and the failure's message
/// (empty on success).
struct PointResult {
  std::vector<double> figures;
  std::string error;
};

/// A copy of SYS (a model loaded from a file) whose parameters NAMES can be set in place.
/// Throws InputError when SYS is not a model file, a name is no parameter of it, or the period,
/// breakpoints or window are computed from one of them.
std::unique_ptr<ExpressionSystem> make_sweep_system(const System& sys, const std::vector<std::string>& names);

/// Runs JOB at point K with the swept parameters at VALUES (JOB.point_figures: by default SYS, an
/// ExpressionSystem from make_sweep_system, takes the values); any failure (bad values, a
/// numerical failure, anything thrown) is caught and becomes the result's error with NFIGURES NaN
/// figures.
PointResult evaluate_point(System& sys, const SweepJob& job, const std::vector<double>& values, std::size_t k,
                           std::size_t nfigures);

/// Hands results that finish in any order on to EMIT in ascending position order (positions
/// 0, 1, 2, ...), holding back the ones that come early. Not thread-safe by itself.
class OrderedResults {
 public:
  using Emit = std::function<void(std::size_t position, const PointResult&)>;
  explicit OrderedResults(Emit emit) : emit_(std::move(emit)) {}
  void add(std::size_t position, PointResult result);
  std::size_t emitted() const { return next_; }

 private:
  Emit emit_;
  std::size_t next_ = 0;
  std::map<std::size_t, PointResult> waiting_;  // finished early, by position
};

/// Runs the points TODO (indices into POINTS) on THREADS threads (each with its own clone of
/// BASE, the system the job's point_figures is given, and its own job from MAKE_JOB), handing each point out as a thread becomes free, and
/// calls EMIT(k, result) for them in the order of TODO, from one thread at a time. An exception
/// from EMIT stops the run and is rethrown.
void run_points_on_threads(const System& base, const SweepJobFactory& make_job, const SweepPoints& points,
                           const std::vector<std::size_t>& todo, int threads,
                           const std::function<void(std::size_t k, const PointResult&)>& emit);

/// The table: header "PARAMS...,FIGURES...,error" and one line per point.
std::string sweep_header(const std::vector<std::string>& parameters, const std::vector<std::string>& figures);
/// The row of a point without its newline: values and figures in the shortest text that reads
/// back to the same double
/// ("nan" and "inf" as numpy reads them), then the error, quoted as CSV when it must be.
std::string sweep_row(const std::vector<double>& values, const PointResult& result);
/// The start of sweep_row for VALUES, up to and including the comma after the last parameter:
/// what a resumed table's row must begin with.
std::string sweep_row_prefix(const std::vector<double>& values);

/// The figures and error of ROW, a line of sweep_row with NVALUES parameters and NFIGURES
/// figures (the inverse of sweep_row: each number reads back to the same double, the error is
/// unquoted). Throws InputError when ROW does not have that form.
PointResult parse_sweep_row(const std::string& row, std::size_t nvalues, std::size_t nfigures);

/// The complete rows of an earlier run of the same sweep in TEXT (a table whose header is
/// HEADER): the longest prefix of lines that end in a newline and belong, in order, to points
/// 0, 1, ... of POINTS. Throws InputError naming PATH when the header differs or a row belongs to
/// another point (a different sweep).
std::vector<std::string> resumable_rows(const std::string& text, const std::string& path, const std::string& header,
                                        const SweepPoints& points);

/// What a sweep did, for the summary.
struct SweepReport {
  ReportHeader header;                 ///< the model with its values at load, the job's window
  std::string job;
  Json job_settings;
  std::vector<std::string> parameters, figures;
  std::string points_from;             ///< "grid" or "samples"
  Json plan;                           ///< the axes, or the distributions with runs and seed
  std::size_t points = 0, computed = 0, resumed = 0, failed = 0;
  int threads = 1, ranks = 1;
  double seconds = 0;
  std::vector<std::pair<std::size_t, std::string>> first_failures;  ///< up to 10: point, message

  /// The common header, then job, job_settings, parameters, figures, points_from, plan, points,
  /// computed, resumed, failed, first_failures, threads, ranks, seconds.
  Json to_json() const;
  std::string brief() const;
};

/// The plan part of a SweepReport for POINTS.
Json plan_json(const SweepPoints& points);

}  // namespace ordex
