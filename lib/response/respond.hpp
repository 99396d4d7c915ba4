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
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "io/json.hpp"
#include "propagation/ode_integrator.hpp"
#include "propagation/options.hpp"
#include "response/input_history.hpp"

namespace ordex {

/// Which computation produces the response.
enum class ResponsePath {
  Exact,  ///< step matrices of the held-input block generator from the transition-matrix engine
  Direct  ///< CVODE on x' = A x + B u(t), u interpolated with the same hold
};
/// "exact" or "direct".
std::string response_path_name(ResponsePath p);
/// Inverse of response_path_name; throws InputError "--path: ...".
ResponsePath parse_response_path(const std::string& name);

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
  /// Window [t0, t1] with t0 < t1; empty (default) means each history's own time span. It must
  /// lie within the samples of every history.
  std::optional<std::pair<double, double>> window;
  /// Output times, strictly increasing, inside the window; empty (default) means the
  /// history's sample times inside the window together with the window's ends.
  std::vector<double> sample_times;
  /// Initial state x(t0); empty (default) means zero.
  Eigen::VectorXd x0;
  /// Called now and then with the fraction of the work done; may be empty (default).
  std::function<void(double)> progress;

  /// Throws InputError naming the option when a field is out of range for SYS.
  void validate(const System& sys) const;
};

/// The response to one history.
struct RunResult {
  std::string source;       ///< the history's source (input file), empty for a free response
  double t0 = 0, t1 = 0;    ///< window
  std::vector<double> times;  ///< output times
  Eigen::MatrixXd states;   ///< times x n
  Eigen::MatrixXd outputs;  ///< times x p: y = C x + D u
  Eigen::VectorXd x_final;  ///< x(t1)
  Eigen::VectorXd y_final;  ///< y(t1)
};

struct RespondReport {
  std::vector<RunResult> runs;  ///< one per history, in the order given
  Hold hold = Hold::Linear;
  ResponsePath path = ResponsePath::Exact;
  Method method = Method::Auto;     ///< exact path: engine method used
  PropagationStats propagation;     ///< exact path: engine counts and error estimate
  OdeStats direct;                  ///< direct path: CVODE counts
  std::size_t grids = 0;            ///< distinct time grids (exact path: step matrices per grid)
  long computed_steps = 0;          ///< exact path: interval steps integrated by the engine
  long reused_steps = 0;            ///< exact path: steps reused from an equal-length interval
  bool time_invariant = false;      ///< exact path: some grid was treated as time-invariant
  double seconds = 0;               ///< wall time of the computation
};

/// The responses of SYS to HISTORIES (each with SYS's number of inputs). Throws InputError for
/// a history that does not cover the window, NumericalError when the integration fails.
RespondReport respond(const System& sys, const std::vector<InputHistory>& histories,
                      const RespondOptions& options);

/// A history with no inputs spanning [t0, t1]: the free response of a model without inputs.
InputHistory free_response_history(double t0, double t1);

/// JSON summary of one run (CONTRACT.md): input, t0, t1, samples, x_final, y_final.
Json run_summary_json(const RunResult& run);
/// The whole report: app, method, hold, path, stats, runs; with one run also its summary keys
/// at the top level.
Json respond_report_json(const RespondReport& report, const System& sys);
/// Writes RUN as CSV `t,<state names>,<output names>` (atomic).
void write_run_csv(const std::string& path, const System& sys, const RunResult& run);
/// A few lines for standard output.
std::string respond_report_text(const RespondReport& report, const System& sys);

}  // namespace ordex
