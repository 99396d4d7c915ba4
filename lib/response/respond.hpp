#pragma once
// Forced response x(t) = Phi(t, t0) x0 + int Phi(t, s) B(s) u(s) ds, y = C x + D u, to one or
// more sampled input histories.
//
// Exact path: on every interval between consecutive knots (the input's sample times and the
// output times) the held input makes the step exact: x(b) = phi x(a) + gamma0 u(a) + gamma1 u(b)
// with the step matrices of the input-augmented generator (step_matrices.hpp). Histories that
// share a time grid share the step matrices: they are computed once and applied to each.
// Direct path (a cross-check): CVODE on x' = A x + B u(t) with the same interpolated input,
// restarted at every knot.
#include <Eigen/Dense>
#include <functional>
#include <memory>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "io/json.hpp"
#include "model/model_report.hpp"
#include "propagation/ode_integrator.hpp"
#include "propagation/options.hpp"
#include "response/direct_path.hpp"
#include "response/input_history.hpp"

namespace ordex {

/// Which computation produces the response.
enum class ResponsePath {
  Exact,  ///< step matrices of the held-input block generator from the transition-matrix engine
  Direct  ///< CVODE on x' = A x + B u(t), u interpolated with the same hold
};
/// "exact" or "direct".
std::string response_path_name(ResponsePath p);
/// Inverse of response_path_name; throws InputError "RespondOptions::path: unknown path ...".
ResponsePath parse_response_path(const std::string& name);

/// One output sample of one run, as RespondOptions::sink receives it.
struct ResponseSample {
  std::size_t run = 0;    ///< index of the history (in the order given; 0 for a free response)
  std::size_t k = 0;      ///< index of the output time in the run: 0, 1, ..., count - 1
  std::size_t count = 0;  ///< output times of the run in all (k == count - 1 is its last)
  double t = 0;           ///< the output time
  Eigen::VectorXd x;      ///< the state x(t), n entries
  Eigen::VectorXd y;      ///< the output y(t) = C x + D u, p entries
};
/// Receives each output sample as it is computed. Within a run the samples come in order of
/// time; runs that share a time grid are advanced together, so their samples interleave (each
/// run's own order is kept). An exception thrown here stops the job and propagates.
using ResponseSink = std::function<void(const ResponseSample&)>;

struct RespondOptions {
  /// How the input is held between samples; default Hold::Linear.
  Hold hold = Hold::Linear;
  /// Exact (default) or Direct, see above.
  ResponsePath path = ResponsePath::Exact;
  /// Engine options of the exact path (method, tolerances); the direct path takes its
  /// tolerances (rtol, atol, max_step, max_steps) from here too. Default: PropagationOptions{}.
  PropagationOptions propagation;
  /// Scheme of the direct path; default Adams (non-stiff). Bdf uses Newton with the exact
  /// n x n factorization of I - gamma A(t) as preconditioner.
  OdeScheme direct_scheme = OdeScheme::Adams;
  /// When the model is known to be time-invariant (known_time_invariant: every entry a
  /// constant, no breakpoints), intervals of equal length share one step computation; default
  /// true.
  bool reuse_time_invariant = true;
  /// Start and end of the window. Default none: the model's declared [window] when it has one
  /// (not one derived from its tables); else, when samples or sample_times are given or only one
  /// end is set, the span every history covers; else each history's own span. The window must
  /// lie within the samples of every history; t0 < t1.
  std::optional<double> t0, t1;
  /// Output times: this many equally spaced in the window, both ends included; default 0 means
  /// the histories' own sample times in the window with its ends (101 for a free response).
  /// 0 or in [2, 10^7].
  int samples = 0;
  /// Explicit output times, strictly increasing, inside the window (which must then be set);
  /// default empty. Replaces samples.
  std::vector<double> sample_times;
  /// Initial state x(t0); empty (default) means zero.
  Eigen::VectorXd x0;
  /// Called now and then with the fraction of the work done; may be empty (default).
  std::function<void(double)> progress;
  /// Where the samples go; default empty: into the report's runs (times, states, outputs).
  /// When set, every sample goes to the sink as it is computed and the report keeps only each
  /// run's summary (window, samples, x_final, y_final), so memory does not grow with the number
  /// of output times (the exact path; the direct path holds one run's states at a time, for
  /// its accuracy check).
  ResponseSink sink;

  /// Throws InputError naming the field ("RespondOptions::x0: 3 entries, the model has 2
  /// states") when a field is out of range for SYS.
  void validate(const System& sys) const;
};

/// The response to one history.
struct RunResult {
  std::string source;       ///< the history's source (input file), empty for a free response
  double t0 = 0, t1 = 0;    ///< window
  std::size_t samples = 0;  ///< number of output times (also when they went to a sink)
  std::vector<double> times;  ///< output times (empty when RespondOptions::sink took them)
  Eigen::MatrixXd states;   ///< times x n (0 rows with a sink)
  Eigen::MatrixXd outputs;  ///< times x p: y = C x + D u (0 rows with a sink)
  Eigen::VectorXd x_final;  ///< x(t1)
  Eigen::VectorXd y_final;  ///< y(t1)
};

struct RespondReport {
  /// The common header: the model (title, source, parameters in effect), t0 and t1 (the span
  /// of the runs' windows) and the method used.
  ReportHeader header;
  std::vector<std::string> states, inputs, outputs;  ///< the model's names
  std::vector<RunResult> runs;  ///< one per history, in the order given
  Hold hold = Hold::Linear;
  ResponsePath path = ResponsePath::Exact;
  Method method = Method::Auto;     ///< exact path: engine method used
  PropagationStats propagation;     ///< exact path: engine counts and error estimate
  OdeStats direct;                  ///< direct path: CVODE counts
  DirectAccuracy direct_accuracy;   ///< direct path: estimated global error against the tolerance
  std::size_t grids = 0;            ///< distinct time grids (exact path: step matrices per grid)
  long computed_steps = 0;          ///< exact path: interval steps integrated by the engine
  long reused_steps = 0;            ///< exact path: steps reused from an equal-length interval
  bool time_invariant = false;      ///< exact path: some grid was treated as time-invariant
  double seconds = 0;               ///< wall time of the computation
  /// Lines for standard error: histories of which only a few samples fall inside the window
  /// (window_fit_warning), usually times in another unit than the model's.
  std::vector<std::string> warnings;

  /// The summary: the common header (ordex_version, model, t0, t1, method), then hold, path, names, runs (each: input, t0, t1, samples, x_final, y_final),
  /// with one run also its keys at the top level, and stats. The app adds "app".
  Json to_json() const;
  /// A few lines for standard output.
  std::string brief() const;
};

/// The response job: the responses of SYS to HISTORIES (each with SYS's number of inputs; none
/// for a model without inputs gives its free response over the window). Throws InputError for
/// bad options or a history that does not cover the window, NumericalError when the
/// integration fails.
RespondReport respond(const System& sys, const std::vector<InputHistory>& histories,
                      const RespondOptions& options);

/// A history with no inputs spanning [t0, t1]: the free response of a model without inputs.
InputHistory free_response_history(double t0, double t1);

/// A run's CSV `t,<state names>,<output names>`, written one sample at a time (from
/// RespondOptions::sink) into a temporary that commit() renames into place (io/output_file.hpp).
class RunCsv {
 public:
  /// Opens the temporary for PATH and writes the header row.
  RunCsv(const std::string& path, const std::vector<std::string>& states, const std::vector<std::string>& outputs);
  ~RunCsv();
  RunCsv(const RunCsv&) = delete;
  RunCsv& operator=(const RunCsv&) = delete;
  /// One row: T, then X, then Y.
  void row(double t, const Eigen::Ref<const Eigen::VectorXd>& x, const Eigen::Ref<const Eigen::VectorXd>& y);
  /// Renames the file into place; throws InputError naming it when writing failed.
  void commit();

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

/// Writes RUN (kept in the report: no sink) as CSV `t,<state names>,<output names>` (atomic).
void write_run_csv(const std::string& path, const RespondReport& report, const RunResult& run);

}  // namespace ordex
