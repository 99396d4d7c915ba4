#pragma once
// Periodic systems and reference-free accuracy checks on a transition matrix.
#include <Eigen/Dense>

#include "propagation/generator.hpp"

namespace ordex {

/// Floquet analysis of a monodromy matrix M = Phi(t0 + T, t0).
struct FloquetReport {
  double period = 0;
  Eigen::VectorXcd multipliers;  ///< eigenvalues of M, sorted by decreasing modulus
  Eigen::VectorXcd exponents;    ///< log(mu) / T, principal branch
  bool stable = false;           ///< asymptotically stable: every |mu| < 1
  double largest_modulus = 0;    ///< max |mu|
};

FloquetReport floquet_analysis(const Eigen::MatrixXd& monodromy, double period);

/// Liouville's formula: det Phi(t1, t0) = exp(integral of trace G over [t0, t1]).
struct LiouvilleReport {
  double det_phi = 0;
  double exp_integral_trace = 0;
  double relative_difference = 0;  ///< |det - exp(int)| / max(|exp(int)|, tiny)
};

/// Integrates trace G by adaptive Gauss-Kronrod (Boost.Math), split at the breakpoints, to a
/// relative accuracy well below TOL, and compares with det PHI.
LiouvilleReport liouville_check(const Generator& g, double t0, double t1, const Eigen::MatrixXd& phi,
                                double tol = 1e-12);

}  // namespace ordex
