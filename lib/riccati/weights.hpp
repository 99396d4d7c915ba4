#pragma once
// The weights of the quadratic cost
//   J = x(t1)' Qf x(t1) + int_t0^t1 ( x'Q x + 2 x'N u + u'R u ) dt,
// each a constant matrix or a matrix whose entries are expressions of t, read from a weights
// file (CONTRACT.md ordex-regulate --weights) or built in code.
#include <Eigen/Dense>
#include <functional>
#include <memory>
#include <string>
#include <vector>

#include "model/system.hpp"

namespace ordex {

/// One weight matrix: constant, or a function of t.
class WeightMatrix {
 public:
  using Fill = std::function<void(double t, MatrixRef out)>;

  WeightMatrix() = default;
  /// A constant matrix; NAME is used in messages ("weights.toml: Q").
  static WeightMatrix constant(const Eigen::MatrixXd& value, const std::string& name);
  /// ROWS x COLS entries written by FILL(t, out).
  static WeightMatrix function(int rows, int cols, Fill fill, const std::string& name);

  int rows() const { return rows_; }
  int cols() const { return cols_; }
  bool is_constant() const { return !fill_; }
  const std::string& name() const { return name_; }
  /// The value at T into OUT (rows x cols); allocation-free for constants.
  void eval(double t, MatrixRef out) const;
  Eigen::MatrixXd at(double t) const;

 private:
  int rows_ = 0, cols_ = 0;
  Eigen::MatrixXd value_;
  Fill fill_;
  std::string name_;
};

/// The four weights. N is n x m (zero when absent).
struct Weights {
  WeightMatrix Q, R, Qf, N;
  bool has_cross = false;  ///< N was given (and may be nonzero)
  std::string source = "defaults";  ///< the weights file, or "defaults" / "code"
  /// The keys of Q, R, Qf that the weights file left out, so that their defaults apply (N,
  /// zero by default, is not listed); empty when the file set all three.
  std::vector<std::string> defaults_used;
  /// One line for the report when a weights file left keys to their defaults, e.g.
  /// "w.toml sets none of Q, R, Qf, N: the defaults Q = I, R = I, Qf = 0 are used"; empty
  /// otherwise (and for weights not read from a file).
  std::string note;
};

/// Q = I (n x n), R = I (m x m), Qf = 0, N = 0 (CONTRACT.md defaults).
Weights default_weights(int n, int m);

/// Reads a weights file: top-level keys Q, R, Qf, N (any subset; absent ones take the defaults,
/// listed in defaults_used and note), each a matrix as a list of rows or a flat list meaning a
/// diagonal; entries numbers or expression strings of t. Every mistake throws InputError
/// "PATH: KEY...: what is wrong".
Weights load_weights(const std::string& path, int n, int m);

struct ExpressionSymbols;  // time_expression.hpp

/// As above for the plant SYS (n states, m inputs: with --controls, the selection), which must
/// outlive the weights: entries may also use the model's parameters (values in effect after
/// --set), [define] names and table columns (model_symbols), and the key Qy (p x p, p outputs)
/// weighs the outputs y = C x + D u: the cost y'Qy y adds C'Qy C to Q, D'Qy D to R and C'Qy D
/// to N (after the file's own Q, R, N or their defaults; docs/periodic.md "Weights").
Weights load_weights(const std::string& path, const System& sys);

/// The names weights of SYS may use: its parameters as constants, its [define] names and table
/// columns as varying symbols (a model read from a file; an InputSelection is seen through).
ExpressionSymbols model_symbols(const System& sys);

/// Tolerances of check_weights.
struct WeightCheckOptions {
  /// Largest |W - W'| allowed, relative to max(1, largest |entry|); default 1e-10.
  double symmetry_tolerance = 1e-10;
  /// An eigenvalue counts as negative below -tol * max(1, largest |eigenvalue|); default 1e-10.
  /// R must have every eigenvalue above +tol * max(1, largest |eigenvalue|).
  double definiteness_tolerance = 1e-10;
  /// Throws InputError naming the field ("WeightCheckOptions::symmetry_tolerance = 0 is outside
  /// (0, 1e-2]") when a tolerance is not in (0, 1e-2].
  void validate() const;
};

/// Checks sizes (Q, Qf n x n; R m x m; N n x m), that Q, R, Qf are symmetric, R positive
/// definite, Qf positive semidefinite and Q - N R^-1 N' positive semidefinite at every time in
/// TIMES (in the order given, so the first failure reported is the first in that order); Qf at
/// T_FINAL. Throws InputError naming the key and the t where it fails.
void check_weights(const Weights& w, int n, int m, const std::vector<double>& times, double t_final,
                   const WeightCheckOptions& options = {});

}  // namespace ordex
