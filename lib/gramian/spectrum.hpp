#pragma once
// What a Gramian says: its eigenvalues, condition number, weakest direction and a rank verdict
// that states what double precision can and cannot decide.
//
// Gramians are kept in square-root form W = L L' (gramian_sweep.hpp): positive semidefinite by
// construction, and their small eigenvalues are the squares of L's singular values, which a
// factor resolves down to about u sigma_max (u the unit round-off) where the explicit W only
// resolves eigenvalues down to about u lambda_max = u sigma_max^2.
//
// The rank is judged on the scaled Gramian S^-1 W S^-1 (StateScaling): by default S balances
// the states (S = sqrt(diag W), the graded form: the verdict is then the same in any units).
// An eigenvalue mu counts when it exceeds rank_tol * mu_max. Each mu carries an error bound
// from the factor's round-off (carried row by row through every product and compression) and
// from the route (the indefinite part the route's step Gramians or Lyapunov solution showed):
// a direction whose bound straddles the threshold is "undetermined", and so is the verdict,
// with the reason and what would resolve it. Integration errors below the engine's tolerance
// are not in the bound: rank_tol must sit above rtol for a weak direction to be trusted.
#include <Eigen/Dense>
#include <string>
#include <vector>

namespace ordex {

/// Default relative rank tolerance (see above).
constexpr double kDefaultRankTol = 1e-10;

enum class ScalingMode {
  None,     ///< the model's own units
  Units,    ///< per-state scales given by the user (StateScaling::units)
  Balance,  ///< automatic: each state scaled by sqrt(W_ii) (graded form); the default
};

/// How states are scaled before the rank is judged.
struct StateScaling {
  /// Default Balance (verdicts independent of the states' units).
  ScalingMode mode = ScalingMode::Balance;
  /// For Units: one positive finite scale per state (x_i is measured in units of units[i], e.g.
  /// 1e3 for a state in metres judged in kilometres).
  Eigen::VectorXd units;
  /// Throws InputError naming GramianOptions::scaling when units do not fit N states.
  void validate(int n) const;
};
/// "none", "units", "balance".
std::string scaling_name(ScalingMode m);
/// Inverse of scaling_name; throws InputError naming GramianOptions::scaling.
ScalingMode parse_scaling(const std::string& text);

enum class RankStatus { FullRank, RankDeficient, Undetermined };
/// "full_rank", "rank_deficient", "undetermined".
std::string rank_status_name(RankStatus s);

/// The rank and whether double precision could decide it.
struct RankVerdict {
  RankStatus status = RankStatus::FullRank;
  int rank_low = 0;   ///< directions certainly counted
  int rank_high = 0;  ///< directions that may count (== rank_low unless undetermined)
  std::string scaling;                 ///< the scaling judged ("balance", "units", "none")
  Eigen::VectorXd scaled_eigenvalues;  ///< eigenvalues of S^-1 W S^-1, ascending
  double threshold = 0;                ///< rank_tol * largest scaled eigenvalue
  double error_floor = 0;              ///< error bound of the weakest scaled eigenvalue
  std::string reason;                  ///< why undetermined (or what limits a deficient verdict)
  std::string remedy;                  ///< what would resolve it
};

/// A Gramian in square-root form with the error bounds its analysis needs.
struct GramianFactor {
  Eigen::MatrixXd L;           ///< n x k, W = L L'
  Eigen::VectorXd row_error;   ///< bound on the 2-norm of the round-off in each row of L
  /// Bound on the route's error of W relative to its graded entries: |E_ij| <= graded_error
  /// sqrt(W_ii W_jj) (the largest indefinite part a step Gramian or the Lyapunov solution had).
  double graded_error = 0;
  long compressions = 0;       ///< QR compressions applied
  Eigen::MatrixXd product() const;  ///< L L', symmetric
};

struct GramianSpectrum {
  Eigen::VectorXd eigenvalues;        ///< ascending, >= 0 (squares of the factor's singular values)
  double condition = 0;               ///< lambda_max / lambda_min; +inf when lambda_min == 0
  int rank = 0;                       ///< verdict.rank_low
  bool full_rank = false;             ///< verdict.status == FullRank
  Eigen::VectorXd weakest_direction;  ///< unit eigenvector of lambda_min, largest entry positive
  /// n x (n - rank): orthonormal basis of the directions counted as zero (the unreachable or
  /// unobservable subspace at the tolerance, in the model's coordinates), weakest first.
  Eigen::MatrixXd missing_directions;
  double rank_tol = kDefaultRankTol;  ///< the relative tolerance used
  double threshold = 0;               ///< rank_tol * lambda_max of the scaled Gramian
  RankVerdict verdict;
};

/// Round-off unit of the factor bookkeeping (a generous multiple of the unit round-off).
double factor_roundoff(int n);

/// A factor of the symmetric matrix W (n x n) computed in graded form: with D = sqrt(diag W)
/// and H = D^-1 W D^-1 = V diag(mu) V', L = D V diag(sqrt(max(mu, 0))). Negative mu (W not
/// semidefinite: errors of the computation that produced it) are dropped; their largest
/// magnitude, relative to H, becomes graded_error. Rows with W_ii <= 0 are zero.
GramianFactor psd_factor(const Eigen::MatrixXd& w);

/// [A, B] compressed: the n x min(n, cols) factor R' of the QR of [A, B]', with the same
/// product; row errors combined and the compression's round-off added.
GramianFactor join_factors(const GramianFactor& a, const GramianFactor& b);

/// M F (the factor of M W M'), row errors carried through |M|.
GramianFactor transform_factor(const Eigen::MatrixXd& m, const GramianFactor& f);

/// Eigen-analysis and rank verdict of W = F.L F.L'. Throws InputError when RANK_TOL is not in
/// (0, 1) or the scaling does not fit, NumericalError when the factor is not finite.
GramianSpectrum analyze_factor(const GramianFactor& f, double rank_tol = kDefaultRankTol,
                               const StateScaling& scaling = {});

/// analyze_factor(psd_factor(W)): for a Gramian given explicitly.
GramianSpectrum analyze_gramian(const Eigen::MatrixXd& w, double rank_tol = kDefaultRankTol,
                                const StateScaling& scaling = {});

/// Eigenvalues only with the same rank rule, for the sliding-window profile.
struct SpectrumSummary {
  double lambda_min = 0, lambda_max = 0, condition = 0;
  int rank = 0;
  RankStatus status = RankStatus::FullRank;
};
SpectrumSummary summarize_spectrum(const Eigen::MatrixXd& w, double rank_tol);
SpectrumSummary summarize_factor(const GramianFactor& f, double rank_tol, const StateScaling& scaling = {});

/// "x 0.707, v -0.707" style text of a direction with the state names (for messages).
std::string describe_direction(const Eigen::VectorXd& v, const std::vector<std::string>& names);

}  // namespace ordex
