#pragma once
// The compiled nonlinear plant: f(x, u, t), h(x, u, t), their exact Jacobians and the nominal
// input u_n(t), evaluated without allocating. One evaluator per thread: clone() gives an
// independent copy (the definition, with its tables, is shared read-only).
#include <Eigen/Dense>
#include <memory>
#include <string>
#include <vector>

#include "model/system.hpp"
#include "model/time_table.hpp"
#include "nonlinear/symbolic_dynamics.hpp"
#include "propagation/state_simulator.hpp"

namespace ordex {

/// Where the nominal input comes from ([nominal] of the model file).
struct NominalInputSpec {
  enum class Kind { none, expressions, samples, trajectory };
  Kind kind = Kind::none;
  std::vector<std::string> texts, keys;  ///< expressions: one per input, in t, parameters, columns
  SampledInput samples;                  ///< samples: an input CSV (linear between samples)
  std::shared_ptr<const TimeTable> trajectory;  ///< trajectory: the nominal CSV
  std::vector<int> trajectory_columns;          ///< trajectory: column of each input
};

/// Everything that defines the plant, immutable once loaded (shared by evaluators).
struct PlantDefinition {
  std::string path;
  SystemInfo info;  ///< names, title, window, breakpoints, period, files read, parameters
  SymbolicDynamics dynamics;
  std::vector<std::shared_ptr<const TimeTable>> tables;
  NominalInputSpec nominal_input;
};

class PlantEvaluator {
 public:
  /// Compiles every expression of DEF. Parameters start at the values of DEF.info.parameters.
  explicit PlantEvaluator(std::shared_ptr<const PlantDefinition> def);
  ~PlantEvaluator();
  std::unique_ptr<PlantEvaluator> clone() const;

  int states() const { return n_; }
  int inputs() const { return m_; }
  int outputs() const { return p_; }
  const PlantDefinition& definition() const { return *def_; }

  /// Parameter I (file order) takes VALUE for f, h and their Jacobians; the nominal input
  /// keeps the file's values (the nominal is what the plant was designed about).
  void set_parameter(int index, double value);
  double parameter(int index) const;

  /// XDOT = f(X, U, T) (arrays of n, m, n values).
  void f(double t, const double* x, const double* u, double* xdot);
  /// Y = h(X, U, T) (p values).
  void h(double t, const double* x, const double* u, double* y);
  /// A = df/dx (n x n), B = df/du (n x m) at (X, U, T).
  void jacobians(double t, const double* x, const double* u, MatrixRef A, MatrixRef B);
  /// C = dh/dx (p x n), D = dh/du (p x m).
  void output_jacobians(double t, const double* x, const double* u, MatrixRef C, MatrixRef D);
  /// The nominal input u_n(T) (m values).
  void nominal_input(double t, double* u);

 private:
  struct Compiled;
  void load(double t, const double* x, const double* u);

  std::shared_ptr<const PlantDefinition> def_;
  int n_ = 0, m_ = 0, p_ = 0;
  std::unique_ptr<Compiled> c_;
};

}  // namespace ordex
