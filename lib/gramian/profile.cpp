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
  const double u = std::numeric_limits<double>::epsilon();
  const bool reach = kind == GramianKind::Reachability;
  auto one = [&](std::size_t w) {
    const std::size_t i = index_of(spans[w].first), j = index_of(spans[w].second);
    ProfileWindow& out = rep.windows[w];
    out.t_start = grid[i];
    out.t_end = grid[j];
    const Eigen::MatrixXd& F = sw.phi_from_start[i];
    Eigen::MatrixXd g = F * (sw.cum_ctrl[j] - sw.cum_ctrl[i]) * F.transpose();
    double transport = F.squaredNorm();
    double mult = 2 * eta[i];
    if (reach) {
      const Eigen::MatrixXd phi = sw.phi_from_start[j] * sw.phi_to_start[i];
      g = phi * g * phi.transpose();
      transport *= phi.squaredNorm();
      mult += 2 * eta[j];
    }
    out.spectrum = summarize_spectrum(g, options.rank_tol);
    const double lam_eff =
        std::max(out.spectrum.lambda_min, options.rank_tol * std::max(out.spectrum.lambda_max, 0.0));
    const double rounding = transport * u * static_cast<double>(j - i + 2 * n) * sw.cum_ctrl[j].norm();
    out.estimated_error = lam_eff > 0 ? rounding / lam_eff + mult : std::numeric_limits<double>::infinity();
    if (!(out.estimated_error <= options.check_fraction)) {
      out.recomposed = true;
      g = reach ? sw.compose_reachability(i, j) : sw.compose_controllability(i, j);
      out.spectrum = summarize_spectrum(g, options.rank_tol);
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
