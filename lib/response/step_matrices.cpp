#include "response/step_matrices.hpp"

#include <algorithm>
#include <cmath>
#include <exception>
#include <limits>
#include <thread>

#include "io/errors.hpp"

namespace ordex {

Generator held_input_generator(const System& sys, Hold hold) {
  const int n = sys.states(), m = sys.inputs();
  Generator g;
  g.dim = m == 0 ? n : (hold == Hold::Zoh ? n + m : n + 2 * m);
  g.breakpoints = sys.info().breakpoints;
  g.label = m == 0 ? "A(t)"
                   : (hold == Hold::Zoh ? "held-input generator [[A, B], [0, 0]]"
                                        : "linear-input generator [[A, B, 0], [0, 0, I], [0, 0, 0]]");
  const System* s = &sys;
  g.eval = [s, n, m, hold](double t, MatrixRef out) {
    out.setZero();
    s->A(t, out.topLeftCorner(n, n));
    if (m == 0) return;
    s->B(t, out.block(0, n, n, m));
    if (hold == Hold::Linear) out.block(n, n + m, m, m).setIdentity();
  };
  return g;
}

StepMatrices step_from_transition(const Eigen::MatrixXd& S, int n, int m, Hold hold, double a, double b) {
  StepMatrices st;
  st.t_start = a;
  st.t_end = b;
  st.phi = S.topLeftCorner(n, n);
  if (hold == Hold::Zoh) {
    st.gamma0 = S.block(0, n, n, m);
  } else {
    // Top-right block: response to a unit slope v, i.e. u(s) = (s - a) v; u(b) - u(a) = h v.
    st.gamma1 = S.block(0, n + m, n, m) / (b - a);
    st.gamma0 = S.block(0, n, n, m) - st.gamma1;
  }
  return st;
}

bool known_time_invariant(const System& sys, double t0, double t1) {
  return sys.time_invariant() && sys.breakpoints_between(t0, t1).empty();
}

StepMatrixBuilder::StepMatrixBuilder(const System& sys, Hold hold, PropagationOptions options, bool reuse, int threads)
    : sys_(sys),
      hold_(hold),
      reuse_(reuse),
      threads_(std::max(1, threads)),
      generator_(held_input_generator(sys, hold)),
      options_(std::move(options)) {
  // Validates the options and resolves the method now, so errors surface before any work.
  stats_.method = Propagator(generator_, options_).method();
}

void StepMatrixBuilder::add_stats(const PropagationStats& s) {
  stats_.method = s.method;
  stats_.steps += s.steps;
  stats_.rejected_steps += s.rejected_steps;
  stats_.evaluations += s.evaluations;
  stats_.error_estimate = std::max(stats_.error_estimate, s.error_estimate);
}

void StepMatrixBuilder::for_each_step(const std::vector<double>& knots,
                                      const std::function<void(std::size_t, const StepMatrices&)>& visit) {
  if (knots.size() < 2) return;
  for (std::size_t k = 1; k < knots.size(); ++k)
    if (!(knots[k] > knots[k - 1])) throw InputError("step grid: times must be strictly increasing");
  const int n = sys_.states(), m = sys_.inputs();
  time_invariant_ = reuse_ && known_time_invariant(sys_, knots.front(), knots.back());
  // The switching times of non-smooth entries inside this grid's span become breakpoints.
  Generator generator = generator_;
  add_switching_times(generator, sys_, knots.front(), knots.back());
  if (!time_invariant_ && threads_ > 1 && knots.size() > 2 && sys_.clones_may_run_concurrently()) {
    parallel_steps(generator, knots, visit);
    return;
  }
  Propagator propagator(generator, options_);
  if (!time_invariant_) {
    propagator.for_each_interval(knots, [&](std::size_t k, const Eigen::MatrixXd& S) {
      ++computed_;
      visit(k, step_from_transition(S, n, m, hold_, knots[k], knots[k + 1]));
    });
    add_stats(propagator.stats());
    return;
  }
  // Time-invariant: the step depends on the interval length only. Lengths that differ by the
  // rounding of the times (a few ulps of the largest |t|) count as equal; the error this
  // admits is of that rounding's size, far below any integration tolerance.
  const double scale = std::max(std::abs(knots.front()), std::abs(knots.back()));
  const double same = 64 * std::numeric_limits<double>::epsilon() * std::max(scale, 1e-300);
  std::vector<StepMatrices> cache;  // a few distinct lengths at most (kept small)
  cache.reserve(16);                // no reallocation: LAST points into it
  StepMatrices scratch;
  const StepMatrices* last = nullptr;
  for (std::size_t k = 0; k + 1 < knots.size(); ++k) {
    const double a = knots[k], b = knots[k + 1], h = b - a;
    const StepMatrices* hit = nullptr;
    for (const StepMatrices& c : cache)
      if (std::abs((c.t_end - c.t_start) - h) <= same) { hit = &c; break; }
    if (hit) {
      // Copy only when the length changes, so a uniform grid costs no copies.
      ++reused_;
      if (hit != last) scratch = *hit;
      last = hit;
      scratch.t_start = a;
      scratch.t_end = b;
      visit(k, scratch);
      continue;
    }
    StepMatrices st = step_from_transition(propagator.transition(a, b), n, m, hold_, a, b);
    ++computed_;
    if (cache.size() < 16) cache.push_back(st);
    visit(k, st);
  }
  add_stats(propagator.stats());
}

void StepMatrixBuilder::parallel_steps(const Generator& generator, const std::vector<double>& knots,
                                       const std::function<void(std::size_t, const StepMatrices&)>& visit) {
  const int n = sys_.states(), m = sys_.inputs();
  const std::size_t intervals = knots.size() - 1;
  const int threads = static_cast<int>(std::min<std::size_t>(static_cast<std::size_t>(threads_), intervals));
  // Each thread integrates a batch of consecutive intervals per round on its own model clone and
  // engine (kept across rounds, so each engine carries its step size along as the serial path
  // does); the main thread then hands the round's steps to VISIT in order. A batch of 128 keeps
  // the memory held bounded (threads x 128 transition matrices) and the thread starts rare.
  constexpr std::size_t kBatch = 128;
  std::vector<std::unique_ptr<System>> clones;
  std::vector<Propagator> engines;
  PropagationOptions o = options_;
  o.progress = nullptr;  // reported per round below
  for (int c = 0; c < threads; ++c) {
    clones.push_back(sys_.clone());
    Generator g = held_input_generator(*clones.back(), hold_);
    g.breakpoints = generator.breakpoints;  // the model's and the switching times, found once
    g.notes = generator.notes;
    engines.emplace_back(std::move(g), o);
  }
  std::vector<double> worst(static_cast<std::size_t>(threads), 0.0);
  std::vector<std::vector<Eigen::MatrixXd>> out(static_cast<std::size_t>(threads));
  std::vector<std::exception_ptr> errors(static_cast<std::size_t>(threads));
  for (std::size_t round = 0; round < intervals; round += kBatch * static_cast<std::size_t>(threads)) {
    auto work = [&](int c) {
      try {
        out[c].clear();
        const std::size_t first = round + kBatch * static_cast<std::size_t>(c);
        if (first >= intervals) return;
        const std::size_t last = std::min(intervals, first + kBatch);  // intervals [first, last)
        const std::vector<double> sub(knots.begin() + static_cast<std::ptrdiff_t>(first),
                                      knots.begin() + static_cast<std::ptrdiff_t>(last) + 1);
        engines[c].for_each_interval(sub, [&](std::size_t, const Eigen::MatrixXd& S) { out[c].push_back(S); });
        worst[c] = std::max(worst[c], engines[c].stats().error_estimate);
      } catch (...) {
        errors[c] = std::current_exception();
      }
    };
    std::vector<std::thread> pool;
    for (int c = 1; c < threads; ++c) pool.emplace_back(work, c);
    work(0);
    for (auto& th : pool) th.join();
    for (auto& e : errors)
      if (e) std::rethrow_exception(e);  // the earliest interval's failure first
    for (int c = 0; c < threads; ++c) {
      const std::size_t first = round + kBatch * static_cast<std::size_t>(c);
      for (std::size_t i = 0; i < out[c].size(); ++i) {
        const std::size_t k = first + i;
        ++computed_;
        visit(k, step_from_transition(out[c][i], n, m, hold_, knots[k], knots[k + 1]));
      }
    }
    if (options_.progress)
      options_.progress(std::min(1.0, (knots[std::min(intervals, round + kBatch * threads)] - knots.front()) /
                                          (knots.back() - knots.front())));
  }
  for (int c = 0; c < threads; ++c) {
    PropagationStats s = engines[c].stats();
    s.error_estimate = worst[c];
    add_stats(s);
  }
}

std::vector<StepMatrices> StepMatrixBuilder::steps(const std::vector<double>& knots) {
  std::vector<StepMatrices> out;
  out.reserve(knots.empty() ? 0 : knots.size() - 1);
  for_each_step(knots, [&](std::size_t, const StepMatrices& s) { out.push_back(s); });
  return out;
}

}  // namespace ordex
