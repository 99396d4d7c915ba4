#pragma once
// The job behind ordex-propagate: Phi over a window on a sample grid, its diagnostics, and
// Floquet analysis; plus the report's printed and JSON forms.
#include <Eigen/Dense>
#include <optional>
#include <ostream>
#include <vector>

#include "io/json.hpp"
#include "model/system.hpp"
#include "propagation/floquet.hpp"
#include "propagation/options.hpp"

namespace ordex {

struct PropagateRequest {
  /// Floquet analysis of Phi(t1, t0) (the caller makes the window one period); default off.
  bool floquet = false;
};

struct PropagateReport {
  double t0 = 0, t1 = 0;
  Eigen::MatrixXd phi;                     ///< Phi(t1, t0)
  PropagationStats stats;                  ///< steps, evaluations, error estimate of phi
  LiouvilleReport liouville;
  std::vector<double> sample_times;        ///< the output grid
  std::vector<Eigen::MatrixXd> sample_phi; ///< Phi(t_k, t0)
  std::optional<FloquetReport> floquet;
};

/// Propagates SYS over [t0, t1] on SAMPLES (which must end at t1) and fills the report.
PropagateReport propagate_model(const System& sys, double t0, double t1,
                                const std::vector<double>& samples, const PropagationOptions& options,
                                const PropagateRequest& request);

Json propagate_report_json(const System& sys, const PropagateReport& r);
void print_propagate_report(std::ostream& out, const System& sys, const PropagateReport& r);

}  // namespace ordex
