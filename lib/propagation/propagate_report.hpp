#pragma once
// The propagate job: the transition matrix Phi(t1, t0) of a System over a window, optionally on
// a grid of sample times (kept, or handed to a sink as each is computed so that a long grid is
// never held in memory), with the engine's error estimate, Liouville's check and, for a
// periodic model over one period, Floquet analysis. Its Report has a brief text form and the
// JSON summary of CONTRACT.md.
//
//   ordex::PropagateOptions o;               // engine defaults, no grid
//   ordex::PropagateReport r = ordex::propagate(sys, 0.0, 2.0, o);
//   std::cout << r.brief();  r.phi;  r.to_json();
#include <Eigen/Dense>
#include <cstddef>
#include <functional>
#include <optional>
#include <string>
#include <vector>

#include "io/json.hpp"
#include "model/model_report.hpp"
#include "model/system.hpp"
#include "propagation/floquet.hpp"
#include "propagation/options.hpp"

namespace ordex {

/// Largest grid a propagate job accepts (PropagateOptions::samples).
constexpr int kMaxPropagateSamples = 10000000;

struct PropagateOptions {
  /// The engine: method, tolerances, step limits and the progress callback; default the
  /// engine's defaults (auto method, rtol 1e-8, atol 1e-10).
  PropagationOptions propagation;
  /// Grid: Phi(t_k, t0) at this many equally spaced times of [t0, t1], both ends included.
  /// Default 0: no grid, only Phi(t1, t0) (the engine then needs no stops inside the window).
  /// Otherwise in [2, kMaxPropagateSamples].
  int samples = 0;
  /// Floquet analysis of Phi(t1, t0) as the monodromy matrix. Default false. Needs a model with
  /// a period and the window of one period, t1 = t0 + period (floquet_window_end).
  bool floquet = false;
  /// Liouville's check det Phi = exp(integral of trace A) (one quadrature of the trace); default
  /// true.
  bool liouville = true;
  /// Throws InputError naming the field ("PropagateOptions::samples = 1 is ...") when a field is
  /// out of range, including the engine's options.
  void validate() const;
};

/// Receives grid sample K (k = 0 .. samples-1, in order) at time T: Phi(t, t0). Called as each
/// sample is computed; PHI is only valid during the call.
using PhiSink = std::function<void(std::size_t k, double t, const Eigen::MatrixXd& phi)>;

struct PropagateReport {
  ReportHeader header;                     ///< model, parameters, window, method actually used
  std::vector<std::string> states;         ///< state names, the order of Phi's rows and columns
  Eigen::MatrixXd phi;                     ///< Phi(t1, t0)
  PropagationStats stats;                  ///< steps, evaluations, error estimate of phi
  std::optional<LiouvilleReport> liouville;  ///< when PropagateOptions::liouville
  std::optional<FloquetReport> floquet;    ///< when PropagateOptions::floquet
  /// The grid when no sink was given (empty otherwise): times and Phi(t_k, t0).
  std::vector<double> sample_times;
  std::vector<Eigen::MatrixXd> sample_phi;
  std::size_t samples_streamed = 0;        ///< grid samples handed to the sink
  /// Model entries whose switching times could not be located (the estimate may miss a jump).
  std::vector<std::string> notes;

  /// A few lines for a terminal: model, window, method and cost, Phi (whole up to
  /// kBriefMaxStates states, summarised beyond), error estimate, Liouville and Floquet lines.
  std::string brief() const;
  /// The summary: the common header, then states, steps, rejected_steps, matrix_evaluations,
  /// phi, error_estimate, liouville {...}, floquet {...}, notes.
  Json to_json() const;
};

/// The propagate job on SYS over [t0, t1] (t1 < t0 propagates backward). With a grid
/// (OPTIONS.samples > 0) and a SINK, each sample goes to the sink as it is computed and the
/// report keeps none; without a sink the report keeps the grid. Throws InputError for bad
/// options or a window the model is not defined on, NumericalError when the integration fails
/// (naming the entry and t when the model can tell).
PropagateReport propagate(const System& sys, double t0, double t1, const PropagateOptions& options,
                          const PhiSink& sink = {});

/// t0 + the model's period: the window end of a Floquet analysis from T0. Throws InputError
/// naming system.period when the model declares none.
double floquet_window_end(const System& sys, double t0);

}  // namespace ordex
