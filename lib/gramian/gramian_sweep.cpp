#include "gramian/gramian_sweep.hpp"

#include <algorithm>
#include <cmath>
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
  g.van_loan_half = n;  // q is symmetric (B B' or C' C): the steppers work on the blocks
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

GramianFactor GramianSweep::reachability_factor(std::size_t i, std::size_t j) const {
  GramianFactor f;
  f.L.resize(n(), 0);
  f.row_error = Eigen::VectorXd::Zero(n());
  for (std::size_t k = i; k < j; ++k) f = join_factors(transform_factor(step_phi[k], f), step_reach_factor[k]);
  return f;
}

GramianFactor GramianSweep::controllability_factor(std::size_t i, std::size_t j) const {
  GramianFactor f;
  f.L.resize(n(), 0);
  f.row_error = Eigen::VectorXd::Zero(n());
  for (std::size_t k = j; k-- > i;) f = join_factors(step_ctrl_factor[k], transform_factor(step_phi_inv[k], f));
  return f;
}

Eigen::MatrixXd GramianSweep::compose_reachability(std::size_t i, std::size_t j) const {
  return reachability_factor(i, j).product();
}

Eigen::MatrixXd GramianSweep::compose_controllability(std::size_t i, std::size_t j) const {
  return controllability_factor(i, j).product();
}

Eigen::MatrixXd GramianSweep::compose_phi(std::size_t i, std::size_t j) const {
  Eigen::MatrixXd p = Eigen::MatrixXd::Identity(n(), n());
  for (std::size_t k = i; k < j; ++k) p = step_phi[k] * p;
  return p;
}

namespace {

/// One interval's step matrices and Gramians.
struct StepData {
  Eigen::MatrixXd phi, phi_inv, reach, ctrl;
  GramianFactor reach_f, ctrl_f;
};

/// Largest entry of Phi(t, s) or Phi(s, t) accepted in one block transition. The -a' block grows
/// where a decays (stiff modes grow like exp(|lambda| h) there), and a step Gramian formed from
/// much larger blocks loses digits; such an interval is halved and its halves composed.
constexpr double kMaxBlockGrowth = 1e6;
constexpr int kMaxSplits = 40;

/// [a, m] then [m, b] as one step.
StepData compose_steps(const StepData& l, const StepData& r) {
  StepData d;
  d.phi = r.phi * l.phi;
  d.phi_inv = l.phi_inv * r.phi_inv;
  d.reach = symmetrized(r.phi * l.reach * r.phi.transpose() + r.reach);
  d.ctrl = symmetrized(l.ctrl + l.phi_inv * r.ctrl * l.phi_inv.transpose());
  d.reach_f = join_factors(transform_factor(r.phi, l.reach_f), r.reach_f);
  d.ctrl_f = join_factors(l.ctrl_f, transform_factor(l.phi_inv, r.ctrl_f));
  return d;
}

StepData block_step(Propagator& prop, int n, double a, double b, int depth) {
  Eigen::MatrixXd X;
  bool ok = true;
  try {
    X = prop.transition(a, b);
    ok = X.allFinite() && X.topLeftCorner(n, n).cwiseAbs().maxCoeff() <= kMaxBlockGrowth &&
         X.bottomRightCorner(n, n).cwiseAbs().maxCoeff() <= kMaxBlockGrowth;
  } catch (const NumericalError&) {
    if (depth >= kMaxSplits) throw;
    ok = false;
  }
  if (ok) {
    StepData d;
    d.phi = X.topLeftCorner(n, n);
    d.phi_inv = X.bottomRightCorner(n, n).transpose();
    d.reach = symmetrized(X.topRightCorner(n, n) * X.topLeftCorner(n, n).transpose());
    d.ctrl = symmetrized(X.bottomRightCorner(n, n).transpose() * X.topRightCorner(n, n));
    // Square-root forms in graded form, so that a step Gramian whose entries are accurate
    // relative to its diagonal keeps its weak directions (psd_factor).
    d.reach_f = psd_factor(d.reach);
    d.ctrl_f = psd_factor(d.ctrl);
    return d;
  }
  if (depth >= kMaxSplits)
    throw NumericalError("Gramian: the block transition matrix on [" + format_number(a) + ", " + format_number(b) +
                         "] grows past " + format_number(kMaxBlockGrowth) + " even after " +
                         std::to_string(kMaxSplits) + " halvings");
  const double m = 0.5 * (a + b);
  return compose_steps(block_step(prop, n, a, m, depth + 1), block_step(prop, n, m, b, depth + 1));
}

}  // namespace

GramianSweep sweep_gramians(const System& sys, GramianKind kind, const std::vector<double>& times,
                            const PropagationOptions& options, int threads) {
  if (times.size() < 2) throw InputError("Gramian grid: at least two times are needed");
  for (std::size_t k = 0; k + 1 < times.size(); ++k)
    if (!(times[k + 1] > times[k]))
      throw InputError("Gramian grid: times must be strictly increasing (at t = " +
                       format_number(times[k + 1]) + ")");
  // Builds the pair once here so that a model without B (or C) fails before any thread starts.
  const int n = pair_for_kind(sys, kind).n;
  // Switching times of the model's non-smooth entries over the grid, found once for all threads.
  Generator probe;
  add_switching_times(probe, sys, times.front(), times.back());
  const std::size_t intervals = times.size() - 1;
  GramianSweep sw;
  sw.times = times;
  sw.step_phi.resize(intervals);
  sw.step_phi_inv.resize(intervals);
  sw.step_reach.resize(intervals);
  sw.step_ctrl.resize(intervals);
  sw.step_reach_factor.resize(intervals);
  sw.step_ctrl_factor.resize(intervals);

  threads = static_cast<int>(std::max<std::size_t>(1, std::min<std::size_t>(threads, intervals)));
  // Callbacks that may share captured state (a FunctionSystem by default) run on one thread.
  if (!sys.clones_may_run_concurrently()) threads = 1;
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
      // Chunk 0 reports per interval below; the engine's own fraction would run from 0 to 1 in
      // every interval.
      o.progress = nullptr;
      Generator gen = block_generator(pair);
      gen.breakpoints.insert(gen.breakpoints.end(), probe.breakpoints.begin(), probe.breakpoints.end());
      const System* model = own.get();
      gen.diagnose = [model](double t, double dir) { return model->diagnose_entries(t, dir); };
      Propagator prop(std::move(gen), o);
      Eigen::MatrixXd a(n, n);
      double rate = 0;
      for (std::size_t g = cut[c]; g < cut[c + 1]; ++g) {
        // Pieces short enough that neither block can grow past the limit at the growth rates
        // of a's eigenvalues; non-normal growth and changes of the rate are left to block_step.
        // The rate is refreshed every 32 intervals (an O(n^3) eigenvalue problem each time).
        if ((g - cut[c]) % 32 == 0) {
          pair.a(times[g], a);
          const Eigen::VectorXcd ev = a.eigenvalues();
          rate = std::max(ev.real().maxCoeff(), -ev.real().minCoeff());
        }
        const double pieces = std::ceil((times[g + 1] - times[g]) * std::max(rate, 0.0) / std::log(kMaxBlockGrowth));
        const int k = static_cast<int>(std::min(std::max(pieces, 1.0), 1e6));
        StepData d = block_step(prop, n, times[g], k == 1 ? times[g + 1] : times[g] + (times[g + 1] - times[g]) / k, 0);
        for (int piece = 1; piece < k; ++piece) {
          const double pa = times[g] + (times[g + 1] - times[g]) * piece / k;
          const double pb = piece + 1 == k ? times[g + 1] : times[g] + (times[g + 1] - times[g]) * (piece + 1) / k;
          StepData r = block_step(prop, n, pa, pb, 0);
          d = compose_steps(d, r);
        }
        sw.step_phi[g] = std::move(d.phi);
        sw.step_phi_inv[g] = std::move(d.phi_inv);
        sw.step_reach[g] = std::move(d.reach);
        sw.step_ctrl[g] = std::move(d.ctrl);
        sw.step_reach_factor[g] = std::move(d.reach_f);
        sw.step_ctrl_factor[g] = std::move(d.ctrl_f);
        if (c == 0 && options.progress) options.progress(static_cast<double>(g + 1 - cut[0]) / (cut[1] - cut[0]));
      }
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

  sw.notes = probe.notes;
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
    if (!sw.running_valid_to && (!sw.cum_ctrl[k + 1].allFinite() || !sw.phi_from_start[k + 1].allFinite() ||
                                 !sw.phi_to_start[k + 1].allFinite()))
      sw.running_valid_to = k;  // later entries are not finite; users fall back to composition
  }
  return sw;
}

}  // namespace ordex
