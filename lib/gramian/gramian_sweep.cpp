#include "gramian/gramian_sweep.hpp"

#include <algorithm>
#include <exception>
#include <memory>
#include <thread>

#include "io/errors.hpp"
#include "propagation/propagator.hpp"

namespace ordex {

Generator block_generator(const WeightedPair& pair) {
  Generator g;
  const int n = pair.n;
  g.dim = 2 * n;
  g.breakpoints = pair.breakpoints;
  g.label = "block generator [[A, Q], [0, -A']] of " + pair.label;
  auto a = pair.a;
  auto q = pair.q;
  g.eval = [n, a, q](double t, MatrixRef out) {
    a(t, out.topLeftCorner(n, n));
    q(t, out.topRightCorner(n, n));
    out.bottomLeftCorner(n, n).setZero();
    out.bottomRightCorner(n, n) = -out.topLeftCorner(n, n).transpose();
  };
  return g;
}

Eigen::MatrixXd GramianSweep::compose_reachability(std::size_t i, std::size_t j) const {
  const int dim = n();
  Eigen::MatrixXd w = Eigen::MatrixXd::Zero(dim, dim);
  for (std::size_t k = i; k < j; ++k) w = step_phi[k] * w * step_phi[k].transpose() + step_reach[k];
  return symmetrized(w);
}

Eigen::MatrixXd GramianSweep::compose_controllability(std::size_t i, std::size_t j) const {
  const int dim = n();
  Eigen::MatrixXd w = Eigen::MatrixXd::Zero(dim, dim);
  for (std::size_t k = j; k-- > i;) w = step_ctrl[k] + step_phi_inv[k] * w * step_phi_inv[k].transpose();
  return symmetrized(w);
}

Eigen::MatrixXd GramianSweep::compose_phi(std::size_t i, std::size_t j) const {
  Eigen::MatrixXd p = Eigen::MatrixXd::Identity(n(), n());
  for (std::size_t k = i; k < j; ++k) p = step_phi[k] * p;
  return p;
}

GramianSweep sweep_gramians(const System& sys, GramianKind kind, const std::vector<double>& times,
                            const PropagationOptions& options, int threads) {
  if (times.size() < 2) throw InputError("Gramian grid: at least two times are needed");
  for (std::size_t k = 0; k + 1 < times.size(); ++k)
    if (!(times[k + 1] > times[k]))
      throw InputError("Gramian grid: times must be strictly increasing (at t = " +
                       format_number(times[k + 1]) + ")");
  // Builds the pair once here so that a model without B (or C) fails before any thread starts.
  const int n = pair_for_kind(sys, kind).n;
  const std::size_t intervals = times.size() - 1;
  GramianSweep sw;
  sw.times = times;
  sw.step_phi.resize(intervals);
  sw.step_phi_inv.resize(intervals);
  sw.step_reach.resize(intervals);
  sw.step_ctrl.resize(intervals);

  threads = static_cast<int>(std::max<std::size_t>(1, std::min<std::size_t>(threads, intervals)));
  std::vector<std::size_t> cut(threads + 1);
  for (int c = 0; c <= threads; ++c) cut[c] = intervals * c / threads;
  std::vector<std::exception_ptr> errors(threads);
  std::vector<PropagationStats> stats(threads);

  // Each chunk of intervals is independent work: every interval starts from the identity.
  auto work = [&](int c) {
    try {
      std::unique_ptr<System> own = sys.clone();
      WeightedPair pair = pair_for_kind(*own, kind);
      PropagationOptions o = options;
      if (c != 0) o.progress = nullptr;  // one thread reports for all
      Propagator prop(block_generator(pair), o);
      std::vector<double> sub(times.begin() + cut[c], times.begin() + cut[c + 1] + 1);
      prop.for_each_interval(sub, [&](std::size_t k, const Eigen::MatrixXd& X) {
        const std::size_t g = cut[c] + k;
        if (!X.allFinite())
          throw NumericalError("Gramian: the block transition matrix is not finite on [" +
                               format_number(times[g]) + ", " + format_number(times[g + 1]) + "]");
        sw.step_phi[g] = X.topLeftCorner(n, n);
        sw.step_phi_inv[g] = X.bottomRightCorner(n, n).transpose();
        sw.step_reach[g] = symmetrized(X.topRightCorner(n, n) * X.topLeftCorner(n, n).transpose());
        sw.step_ctrl[g] = symmetrized(X.bottomRightCorner(n, n).transpose() * X.topRightCorner(n, n));
      });
      stats[c] = prop.stats();
    } catch (...) {
      errors[c] = std::current_exception();
    }
  };
  if (threads == 1) {
    work(0);
  } else {
    std::vector<std::thread> pool;
    for (int c = 1; c < threads; ++c) pool.emplace_back(work, c);
    work(0);
    for (auto& th : pool) th.join();
  }
  for (auto& e : errors)
    if (e) std::rethrow_exception(e);

  sw.stats = stats[0];
  for (int c = 1; c < threads; ++c) {
    sw.stats.steps += stats[c].steps;
    sw.stats.rejected_steps += stats[c].rejected_steps;
    sw.stats.evaluations += stats[c].evaluations;
    sw.stats.error_estimate = std::max(sw.stats.error_estimate, stats[c].error_estimate);
  }

  // Running products: F_k = Phi(t_k, t0), Psi_k = Phi(t0, t_k), C_k = W_c(t0, t_k).
  sw.phi_from_start.resize(intervals + 1);
  sw.phi_to_start.resize(intervals + 1);
  sw.cum_ctrl.resize(intervals + 1);
  sw.phi_from_start[0] = Eigen::MatrixXd::Identity(n, n);
  sw.phi_to_start[0] = Eigen::MatrixXd::Identity(n, n);
  sw.cum_ctrl[0] = Eigen::MatrixXd::Zero(n, n);
  for (std::size_t k = 0; k < intervals; ++k) {
    sw.phi_from_start[k + 1] = sw.step_phi[k] * sw.phi_from_start[k];
    sw.phi_to_start[k + 1] = sw.phi_to_start[k] * sw.step_phi_inv[k];
    const Eigen::MatrixXd& psi = sw.phi_to_start[k];
    sw.cum_ctrl[k + 1] = symmetrized(sw.cum_ctrl[k] + psi * sw.step_ctrl[k] * psi.transpose());
    if (!sw.cum_ctrl[k + 1].allFinite() || !sw.phi_from_start[k + 1].allFinite() ||
        !sw.phi_to_start[k + 1].allFinite())
      throw NumericalError("Gramian: running products overflow at t = " + format_number(times[k + 1]));
  }
  return sw;
}

}  // namespace ordex
