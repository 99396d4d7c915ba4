#pragma once
// The linearize job: the nominal and A, B, C, D of the linearization on a grid, as a CSV and as
// a tabulated model file that reproduces the linearization (docs/nonlinear.md).
#include <Eigen/Dense>
#include <string>
#include <vector>

#include "io/json.hpp"
#include "model/model_report.hpp"
#include "nonlinear/linearized_system.hpp"
#include "nonlinear/nonlinear_model.hpp"

namespace ordex {

struct LinearizeOptions {
  /// Equally spaced times over the window, ends included, when STEP is 0; default 101, >= 2.
  int samples = 101;
  /// Grid t0, t0 + step, ..., t1 (the last interval shorter) when > 0; default 0 (use samples).
  double step = 0;
  /// Throws InputError naming the field.
  void validate() const;
};

struct LinearizeReport {
  ReportHeader header;
  std::vector<std::string> state_names, input_names, output_names;
  std::vector<double> times;
  std::vector<Eigen::VectorXd> x, u;              ///< the nominal at each time
  std::vector<Eigen::MatrixXd> A, B, C, D;        ///< at each time
  /// Header, then times, and the largest |entry| of each matrix over the grid.
  Json to_json() const;
  std::string brief() const;
  /// Columns t, states, inputs, A_1_1..A_n_n, B_1_1.., C_1_1.., D_1_1.. (row-major, 1-based).
  std::vector<std::string> csv_header() const;
};

/// The linearization of MODEL on the grid of O over [T0, T1] (inside the nominal's span).
LinearizeReport linearize(const NonlinearModel& model, double t0, double t1, const LinearizeOptions& o);
/// The linearization of MODEL at TIMES (strictly increasing, at least one, inside the nominal's
/// span); the header's window is [TIMES.front(), TIMES.back()]. InputError otherwise.
LinearizeReport linearize(const NonlinearModel& model, const std::vector<double>& times);

/// Writes the CSV at CSV_PATH (atomic).
void write_linearization_csv(const std::string& csv_path, const LinearizeReport& r);
/// The text of a model file whose [table] is the CSV at CSV_PATH (named relative to the model's
/// folder MODEL_DIR when possible) and whose matrices are its columns: loading it gives A, B, C,
/// D at the grid times, linear between them.
std::string tabulated_model_text(const LinearizeReport& r, const std::string& csv_path, const std::string& model_dir);

}  // namespace ordex
