#include "gramian/profile.hpp"

#include <algorithm>
#include <atomic>
#include <cmath>
#include <exception>
#include <limits>
#include <thread>

#include "io/errors.hpp"

namespace ordex {

void ProfileOptions::validate(double horizon) const {
  if (!(std::isfinite(window_length) && window_length > 0))
    throw InputError("--window-length: " + format_number(window_length) + " must be a positive number");
  if (window_length > horizon * (1 + 1e-12))
    throw InputError("--window-length: " + format_number(window_length) + " is longer than the window [--from, --to] (" +
                     format_number(horizon) + ")");
  if (!(std::isfinite(stride) && stride >= 0))
    throw InputError("--stride: " + format_number(stride) + " must be a positive number");
  if (!(rank_tol > 0 && rank_tol < 1)) throw InputError("--rank-tol: " + format_number(rank_tol) + " is not in (0, 1)");
  if (!(check_fraction > 0 && check_fraction <= 1))
    throw InputError("profile check fraction: " + format_number(check_fraction) + " is not in (0, 1]");
  if (threads < 1 || threads > 64) throw InputError("--threads: " + std::to_string(threads) + " is outside [1, 64]");
  const double s = stride > 0 ? stride : window_length / 10;
  const double count = std::floor((horizon - window_length) / s + 1e-9) + 1;
  if (count > static_cast<double>(max_windows))
    throw InputError("--stride: " + format_number(s) + " gives " + format_number(count) + " windows, more than " +
                     std::to_string(max_windows));
}

std::vector<std::pair<double, double>> profile_windows(double t0, double t1, const ProfileOptions& options) {
  options.validate(t1 - t0);
  const double L = std::min(options.window_length, t1 - t0);
  const double s = options.stride > 0 ? options.stride : L / 10;
  const long count = static_cast<long>(std::floor((t1 - t0 - L) / s + 1e-9)) + 1;
  std::vector<std::pair<double, double>> w;
  w.reserve(static_cast<std::size_t>(count));
  for (long k = 0; k < count; ++k) {
    const double a = t0 + static_cast<double>(k) * s;
    w.emplace_back(a, std::min(a + L, t1));
  }
  return w;
}

namespace {

/// Step pairs composed over aligned dyadic blocks of the grid, so that any window is the
/// composition of at most about 2 log2(N) blocks instead of all its steps. Level L, block k
/// covers intervals [k 2^L, (k + 1) 2^L). Reachability keeps (Phi, factor of W_r) of each block,
/// the other kinds (Phi^-1, factor of W_c): square-root form throughout (spectrum.hpp).
class DyadicBlocks {
 public:
  DyadicBlocks(const GramianSweep& sw, bool reach) : reach_(reach) {
    const std::size_t N = sw.intervals();
    levels_.emplace_back();
    for (std::size_t k = 0; k < N; ++k)
      levels_[0].push_back(
          {reach ? sw.step_phi[k] : sw.step_phi_inv[k], reach ? sw.step_reach_factor[k] : sw.step_ctrl_factor[k]});
    while (levels_.back().size() >= 2) {
      const auto& prev = levels_.back();
      std::vector<Block> next;
      for (std::size_t k = 0; k + 1 < prev.size(); k += 2) next.push_back(join(prev[k], prev[k + 1]));
      levels_.push_back(std::move(next));
    }
  }
  /// The Gramian factor of the window of intervals [i, j).
  GramianFactor window(std::size_t i, std::size_t j) const {
    bool first = true;
    Block acc;
    while (i < j) {
      std::size_t level = 0;
      while (level + 1 < levels_.size() && i % (std::size_t{2} << level) == 0 && i + (std::size_t{2} << level) <= j)
        ++level;
      const Block& b = levels_[level][i >> level];
      acc = first ? b : join(acc, b);
      first = false;
      i += std::size_t{1} << level;
    }
    return acc.w;
  }

 private:
  struct Block {
    Eigen::MatrixXd m;  // Phi (reach) or Phi^-1
    GramianFactor w;    // factor of W_r (reach) or W_c
  };
  /// [earlier] then [later] as one block.
  Block join(const Block& e, const Block& l) const {
    if (reach_) return {l.m * e.m, join_factors(transform_factor(l.m, e.w), l.w)};
    return {e.m * l.m, join_factors(e.w, transform_factor(e.m, l.w))};
  }
  bool reach_;
  std::vector<std::vector<Block>> levels_;
};

}  // namespace

ProfileReport sliding_profile(const System& sys, GramianKind kind, double t0, double t1,
                              const ProfileOptions& options, const PropagationOptions& propagation) {
  if (!(t1 > t0)) throw InputError("Gramian window: --to must be after --from");
  const auto spans = profile_windows(t0, t1, options);
  // The grid: every window end, merged when closer than a tiny fraction of the horizon.
  std::vector<double> all;
  all.reserve(2 * spans.size());
  for (const auto& w : spans) {
    all.push_back(w.first);
    all.push_back(w.second);
  }
  std::sort(all.begin(), all.end());
  const double merge = 1e-12 * (t1 - t0);
  std::vector<double> grid;
  for (double t : all)
    if (grid.empty() || t - grid.back() > merge) grid.push_back(t);
  auto index_of = [&](double t) {
    auto it = std::lower_bound(grid.begin(), grid.end(), t - merge);
    return static_cast<std::size_t>(it - grid.begin());
  };

  ProfileReport rep;
  const GramianSweep sw = sweep_gramians(sys, kind, grid, propagation, options.threads);
  rep.grid_points = grid.size();
  rep.stats = sw.stats;
  const int n = sw.n();
  const Eigen::MatrixXd I = Eigen::MatrixXd::Identity(n, n);
  // Transport consistency |F_k Psi_k - I| per grid point (should be at the engine's error).
  std::vector<double> eta(grid.size());
  for (std::size_t k = 0; k < grid.size(); ++k) eta[k] = (sw.phi_from_start[k] * sw.phi_to_start[k] - I).norm();

  rep.windows.resize(spans.size());
  const DyadicBlocks blocks(sw, kind == GramianKind::Reachability);
  const double u = std::numeric_limits<double>::epsilon();
  const bool reach = kind == GramianKind::Reachability;
  auto one = [&](std::size_t w) {
    const std::size_t i = index_of(spans[w].first), j = index_of(spans[w].second);
    ProfileWindow& out = rep.windows[w];
    out.t_start = grid[i];
    out.t_end = grid[j];
    const Eigen::MatrixXd& F = sw.phi_from_start[i];
    Eigen::MatrixXd g = F * (sw.cum_ctrl[j] - sw.cum_ctrl[i]) * F.transpose();
    // Round-off of the difference, entry by entry: the running sums are sums of positive
    // semidefinite terms, so entry (a, b) of each partial sum is bounded by s_a s_b with
    // s = sqrt(diag C_j); (j - i) additions and the transport add about u (j - i + 2n) s s',
    // which F carries into |F| s (|F| s)'.
    const Eigen::VectorXd s = sw.cum_ctrl[j].diagonal().cwiseMax(0.0).cwiseSqrt();
    Eigen::VectorXd spread = F.cwiseAbs() * s;
    double mult = 2 * eta[i];
    if (reach) {
      const Eigen::MatrixXd phi = sw.phi_from_start[j] * sw.phi_to_start[i];
      g = phi * g * phi.transpose();
      spread = phi.cwiseAbs() * spread;
      mult += 2 * eta[j];
    }
    if (!g.allFinite()) {  // running products overflowed: compose this window
      out.recomposed = true;
      out.estimated_error = std::numeric_limits<double>::infinity();
      out.spectrum = summarize_factor(blocks.window(i, j), options.rank_tol, options.scaling);
      return;
    }
    // Graded-matrix perturbation bound (Demmel & Veselic, SIAM J. Matrix Anal. Appl. 13 (1992)
    // 1204-1245, from memory): with D = sqrt(diag W) and H = D^-1 W D^-1, a perturbation E moves
    // every eigenvalue of W by at most |D^-1 E D^-1| / lambda_min(H) relatively. The round-off
    // bound above is rank one, u (j - i + 2n) v v', so |D^-1 E D^-1| = u (j - i + 2n) |v ./ d|^2.
    // States whose diagonal entry is exactly zero while their running sums are zero too (no
    // spread) have zero rows: they are missing exactly and take no part in the bound. A zero
    // diagonal with nonzero running sums is a total cancellation: recompose. Below the rank threshold eigenvalues are
    // not resolved by either route, so lambda_min(H) is floored at rank_tol.
    const Eigen::VectorXd d = g.diagonal().cwiseMax(0.0).cwiseSqrt();
    std::vector<Eigen::Index> keep;
    bool cancelled = false;  // a zero diagonal left by cancellation, not by structure
    for (Eigen::Index a = 0; a < d.size(); ++a) {
      if (d[a] > 0) keep.push_back(a);
      else if (spread[a] > 0) cancelled = true;
    }
    double rel = cancelled ? std::numeric_limits<double>::infinity() : 0.0;
    if (!cancelled && !keep.empty()) {
      const Eigen::Index k = static_cast<Eigen::Index>(keep.size());
      Eigen::MatrixXd h(k, k);
      Eigen::VectorXd vd(k);
      for (Eigen::Index a = 0; a < k; ++a) {
        vd[a] = spread[keep[a]] / d[keep[a]];
        for (Eigen::Index b = 0; b < k; ++b) h(a, b) = g(keep[a], keep[b]) / (d[keep[a]] * d[keep[b]]);
      }
      const double hmin = std::max(summarize_spectrum(h, options.rank_tol).lambda_min, options.rank_tol);
      rel = u * static_cast<double>(j - i + 2 * n) * vd.squaredNorm() / hmin + mult;
    }
    // The difference in square-root form: its negative part (cancellation made it indefinite)
    // and the estimate above both bound its graded error, which the rank verdict then honours.
    GramianFactor diff = psd_factor(g);
    diff.graded_error = std::max(diff.graded_error, std::isfinite(rel) ? rel : 1.0);
    out.estimated_error = std::max(rel, diff.graded_error);
    if (!(out.estimated_error <= options.check_fraction)) {
      out.recomposed = true;
      out.spectrum = summarize_factor(blocks.window(i, j), options.rank_tol, options.scaling);
    } else {
      out.spectrum = summarize_factor(diff, options.rank_tol, options.scaling);
    }
  };
  // Windows are independent: hand them out to the threads one at a time.
  std::atomic<std::size_t> next{0};
  std::vector<std::exception_ptr> errors(static_cast<std::size_t>(options.threads));
  auto worker = [&](int c) {
    try {
      for (std::size_t w; (w = next.fetch_add(1)) < spans.size();) one(w);
    } catch (...) {
      errors[static_cast<std::size_t>(c)] = std::current_exception();
      next = spans.size();
    }
  };
  const int threads = static_cast<int>(std::min<std::size_t>(options.threads, spans.size()));
  std::vector<std::thread> pool;
  for (int c = 1; c < threads; ++c) pool.emplace_back(worker, c);
  worker(0);
  for (auto& th : pool) th.join();
  for (auto& e : errors)
    if (e) std::rethrow_exception(e);
  for (const auto& w : rep.windows) rep.recomposed += w.recomposed ? 1 : 0;
  return rep;
}

}  // namespace ordex
