#pragma once
// What a Gramian says: its eigenvalues, condition number, numerical rank and weakest direction.
//
// Rank tolerance: an eigenvalue counts when it exceeds rank_tol * lambda_max. The default 1e-10
// sits above double round-off in a composed Gramian (about 1e-14 relative) and below the
// smallest eigenvalues of the bundled models; a direction that is exactly missing (a state the
// inputs never reach) comes out at round-off level and is counted as zero. Integration errors of
// a Gramian are about rtol relative to its largest entries, so a weak but real direction below
// rtol * lambda_max cannot be told from a missing one: raise --rank-tol (or tighten --rtol) then.
#include <Eigen/Dense>
#include <string>
#include <vector>

namespace ordex {

/// Default relative rank tolerance (see above).
constexpr double kDefaultRankTol = 1e-10;

struct GramianSpectrum {
  Eigen::VectorXd eigenvalues;        ///< ascending; round-off negatives kept as computed
  double condition = 0;               ///< lambda_max / lambda_min; +inf when lambda_min <= 0
  int rank = 0;                       ///< eigenvalues > rank_tol * lambda_max
  bool full_rank = false;             ///< rank == n
  Eigen::VectorXd weakest_direction;  ///< unit eigenvector of lambda_min, largest entry positive
  /// n x (n - rank): orthonormal basis of the directions counted as zero (the unreachable or
  /// unobservable subspace at the tolerance), weakest first; empty at full rank.
  Eigen::MatrixXd missing_directions;
  double rank_tol = kDefaultRankTol;  ///< the relative tolerance used
  double threshold = 0;               ///< rank_tol * lambda_max (absolute)
};

/// Eigen-analysis of the symmetric part of W. Throws InputError when RANK_TOL is not in (0, 1),
/// NumericalError when W is not finite or the eigen solver fails.
GramianSpectrum analyze_gramian(const Eigen::MatrixXd& w, double rank_tol = kDefaultRankTol);

/// Eigenvalues only (ascending) with the same rank rule, for the sliding-window profile.
struct SpectrumSummary {
  double lambda_min = 0, lambda_max = 0, condition = 0;
  int rank = 0;
};
SpectrumSummary summarize_spectrum(const Eigen::MatrixXd& w, double rank_tol);

/// "x 0.707, v -0.707" style text of a direction with the state names (for messages).
std::string describe_direction(const Eigen::VectorXd& v, const std::vector<std::string>& names);

}  // namespace ordex
