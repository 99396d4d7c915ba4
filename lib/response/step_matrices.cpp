#include "response/step_matrices.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

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

StepMatrixBuilder::StepMatrixBuilder(const System& sys, Hold hold, PropagationOptions options, bool reuse)
    : sys_(sys), hold_(hold), reuse_(reuse), generator_(held_input_generator(sys, hold)), options_(std::move(options)) {
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

std::vector<StepMatrices> StepMatrixBuilder::steps(const std::vector<double>& knots) {
  std::vector<StepMatrices> out;
  out.reserve(knots.empty() ? 0 : knots.size() - 1);
  for_each_step(knots, [&](std::size_t, const StepMatrices& s) { out.push_back(s); });
  return out;
}

}  // namespace ordex
