#pragma once
// Periodic systems and reference-free accuracy checks on a transition matrix.
#include <Eigen/Dense>
#include <string>

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

/// Liouville's formula det Phi(t1, t0) = exp(integral of trace G over [t0, t1]), compared in
/// logarithms so that neither side under- or overflows: log|det Phi| (from an LU of Phi, the logs
/// of the pivots summed) against the integral of the trace.
struct LiouvilleReport {
  double det_phi = 0;              ///< det Phi (may under/overflow to 0 or inf; see log_abs_det)
  double exp_integral_trace = 0;   ///< exp(integral of trace) (may under/overflow likewise)
  /// |exp(log_abs_det - integral_trace) - 1|, from the logarithms (finite when both sides
  /// underflow); NaN when the check is not meaningful.
  double relative_difference = 0;
  double log_abs_det = 0;          ///< log|det Phi|, sum of log|pivot| of Phi's LU
  double integral_trace = 0;       ///< integral of trace G over [t0, t1] (signed by direction)
  double log_difference = 0;       ///< log_abs_det - integral_trace
  /// Largest |log_difference| that Phi's accuracy explains: about n cond(Phi) (u + e / |Phi|)
  /// with e the caller's error estimate of Phi, plus the quadrature's error.
  double tolerance = 0;
  double condition = 0;            ///< estimated 1-norm condition number of Phi (LU estimate)
  bool meaningful = true;          ///< false: Phi is too ill-conditioned or not finite to check
  bool passed = true;              ///< meaningful and |log_difference| <= tolerance
  std::string note;                ///< why not meaningful, or what a failure means; empty on pass
  long trace_evaluations = 0;      ///< evaluations of G(t) by the quadrature
  long quadrature_pieces = 0;      ///< Gauss-Kronrod pieces (breakpoint intervals and their splits)
};

/// The trace of G integrated piecewise between G's breakpoints with a fixed-cost rule
/// (7-point Gauss / 15-point Kronrod per piece, its difference the error check; a piece failing
/// the check is halved, at most MAX_DEPTH times). Cost: 15 evaluations per piece when the trace
/// is smooth between breakpoints (linear tables: exact on every piece). ERROR receives the
/// summed error estimate, EVALUATIONS and PIECES the counts (each may be null).
double integrate_trace(const Generator& g, double t0, double t1, double tol, double* error = nullptr,
                       long* evaluations = nullptr, long* pieces = nullptr, int max_depth = 12);

/// Compares det PHI with exp(integral of trace G over [t0, t1]) in logarithms. PHI_ERROR is the
/// engine's estimate of the largest absolute error in PHI's entries (0: round-off only). TOL is
/// the quadrature's relative accuracy target.
LiouvilleReport liouville_check(const Generator& g, double t0, double t1, const Eigen::MatrixXd& phi,
                                double tol = 1e-12, double phi_error = 0.0);

}  // namespace ordex
