#pragma once
// The noise of the estimation problem
//   x' = A(t) x + B(t) u + G(t) w,   y = C(t) x + D(t) u + v,
// w and v white with intensities Qn(t) and Rn(t), x(t0) with covariance P0: read from a noise
// file (CONTRACT.md ordex-estimate --noise) or built in code. G is the columns of B for the
// inputs named in `through` (a wind input, a thrust error), an explicit n x q matrix, or, when
// neither is given, the identity (noise on every state).
#include <Eigen/Dense>
#include <cmath>
#include <optional>
#include <string>
#include <vector>

#include "model/system.hpp"
#include "riccati/weights.hpp"

namespace ordex {

struct NoiseModel {
  /// Process noise intensity (q x q, symmetric positive semidefinite), constant or of t.
  WeightMatrix Qn;
  /// The inputs of the model the process noise enters through (G = those columns of B); empty
  /// when G is explicit or the identity.
  std::vector<std::string> through;
  /// An explicit G (n x q), constant or of t; unset with `through` or for the identity.
  std::optional<WeightMatrix> G;
  /// Measurement noise intensity of the model's outputs (p x p, symmetric positive definite);
  /// needed by the continuous filter, not by a covariance analysis (its schedule has its own).
  std::optional<WeightMatrix> Rn;
  /// Covariance of the initial state (n x n, symmetric positive semidefinite).
  Eigen::MatrixXd P0;
  /// The noise file, or "code".
  std::string source = "code";
  /// How G is made, for the report: "inputs u, w", "explicit G" or "identity".
  std::string noise_path() const;
};

/// Reads a noise file: Qn (required), through (a list of input names) or G, Rn, P0 (required);
/// matrices as lists of rows or flat lists meaning diagonals, entries numbers or expressions of
/// t. Every mistake throws InputError "PATH: KEY...: what is wrong" (an unknown input name, a
/// wrong size, a key that is not known).
NoiseModel load_noise(const std::string& path, const System& sys);

/// Checks NOISE against SYS: sizes, `through` names, Qn symmetric positive semidefinite and
/// (when NEED_RN) Rn symmetric positive definite at every time of TIMES (once when constant),
/// P0 symmetric positive semidefinite. TOL as WeightCheckOptions. Throws InputError naming the
/// key and the t where a check fails.
void check_noise(const NoiseModel& noise, const System& sys, const std::vector<double>& times, bool need_rn,
                 const WeightCheckOptions& tol = {});

/// The matrices of the estimation problem at one time, from the plant and the noise, without
/// allocating once sized: A, C, G, Qn, S = G Qn G', and with Rn its inverse and C' Rn^-1 C.
class NoiseTerms {
 public:
  NoiseTerms(const System& sys, const NoiseModel& noise, bool with_rn);
  void at(double t);
  int q() const { return static_cast<int>(Qn.rows()); }
  Eigen::MatrixXd A, B, C, G, Qn, S, Rn, Rn_inv;
  Eigen::MatrixXd CtWC;  ///< C' Rn^-1 C (with Rn)

 private:
  const System& sys_;
  const NoiseModel& noise_;
  std::vector<int> columns_;  // of B, for `through`
  bool with_rn_;
  double t_ = NAN;
};

}  // namespace ordex
