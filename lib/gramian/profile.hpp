#pragma once
// Sliding-window profile: the Gramian of every window [a, a + L], a = t0, t0 + S, ... while
// a + L <= t1, from ONE block-generator sweep over the grid of all window ends.
//
// Each window is read off the sweep's running quantities (gramian_sweep.hpp) by a difference:
//   W_c(t_i, t_j) = F_i (C_j - C_i) F_i',   F_i = Phi(t_i, t0), C_k = W_c(t0, t_k),
// (and W_r(t_i, t_j) = Phi(t_j, t_i) W_c Phi(t_j, t_i)' with Phi(t_j, t_i) = F_j Psi_i), which
// costs O(n^3) per window however long it is. The difference loses accuracy when C_j - C_i is
// small beside C_j, or when F_i is large; each window therefore carries an error estimate.
// Round-off in the running sums is bounded entry by entry (they are sums of positive
// semidefinite terms): |E| <= u (j - i + 2n) v v' with v = |F_i| s, s = sqrt(diag C_j) (for
// reachability v is carried once more by |Phi(t_j, t_i)|). Gramians are strongly graded
// (positions against velocities), so the bound is applied in the graded form of Demmel and
// Veselic: with D = sqrt(diag W) and H = D^-1 W D^-1,
//   rel = u (j - i + 2n) |v ./ diag(D)|^2 / lambda_min(H) + 2 |F_i Psi_i - I|
// bounds the relative change of every eigenvalue (the last term is the multiplicative error of
// the transport; lambda_min(H) is floored at rank_tol, since eigenvalues below the rank
// threshold are resolved by neither route, and states with a zero diagonal entry, exactly
// missing, are left out). A window with rel > check_fraction is recomposed exactly from its
// own step matrices and step Gramians instead, through step pairs pre-composed over aligned
// dyadic blocks of the grid (at most about 2 log2(N) compositions per window), in square-root
// form. A window read off by difference is analysed as a factor whose graded error bound is the
// estimate, so its rank verdict says "undetermined" rather than guess when the difference
// cannot decide; a difference that came out indefinite beyond check_fraction is recomposed.
#include <vector>

#include "gramian/gramian_sweep.hpp"
#include "gramian/spectrum.hpp"

namespace ordex {

struct ProfileOptions {
  /// Window length L > 0 and no longer than the horizon (required; --window-length).
  double window_length = 0;
  /// Stride S between window starts; 0 (default) means L / 10 (--stride).
  double stride = 0;
  /// Relative rank tolerance per window (spectrum.hpp); default 1e-10 (--rank-tol).
  double rank_tol = kDefaultRankTol;
  /// Largest accepted estimated relative error of a window read off by difference, measured
  /// against its smallest counted eigenvalue; above it the window is recomposed. Default 1e-3.
  double check_fraction = 1e-3;
  /// State scaling of each window's rank verdict (spectrum.hpp); default balanced.
  StateScaling scaling;
  /// Threads for the sweep and for the windows; default 2, in [1, 64].
  int threads = 2;
  /// Largest number of windows; default 10^6.
  long max_windows = 1000000;
  /// Throws InputError naming --window-length / --stride / the option.
  void validate(double horizon) const;
};

struct ProfileWindow {
  double t_start = 0, t_end = 0;
  SpectrumSummary spectrum;
  bool recomposed = false;       ///< the difference failed its check; composed from steps
  double estimated_error = 0;    ///< the difference's estimated relative error
};

struct ProfileReport {
  std::vector<ProfileWindow> windows;
  std::size_t grid_points = 0;   ///< times in the sweep
  std::size_t recomposed = 0;    ///< windows recomposed from steps
  PropagationStats stats;        ///< the sweep's engine counts
};

/// Window start/end times of OPTIONS over [t0, t1] (validated).
std::vector<std::pair<double, double>> profile_windows(double t0, double t1, const ProfileOptions& options);

/// The profile of the Gramian of KIND of SYS over [t0, t1].
ProfileReport sliding_profile(const System& sys, GramianKind kind, double t0, double t1,
                              const ProfileOptions& options, const PropagationOptions& propagation);

}  // namespace ordex
