// Benchmark of the Gramian module (docs/performance.md):
//  1. the reachability Gramian of the orbit model over one revolution and of a random n = 48
//     time-varying model, by the block route (engine, Magnus 6), the Lyapunov route (CVODE
//     Adams) and the baseline: the Lyapunov differential equation on the n(n+1)/2 entries
//     integrated by Boost.Odeint runge_kutta_fehlberg78 (integrate_adaptive, make_controlled)
//     at the same tolerances; accuracy of each against a tight reference (block route at
//     rtol 1e-13);
//  2. a profile of 1,000 sliding windows against one Gramian over the whole horizon.
// usage: ordex_bench_gramian [--quick]
#include <boost/numeric/odeint.hpp>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <algorithm>
#include <random>
#include <string>

#include "gramian/gramian.hpp"
#include "gramian/gramian_lyapunov.hpp"
#include "gramian/profile.hpp"
#include "model/function_system.hpp"
#include "model/model_file.hpp"

namespace {

using Clock = std::chrono::steady_clock;

double seconds_since(Clock::time_point t) { return std::chrono::duration<double>(Clock::now() - t).count(); }

/// Best of REPEATS runs of F (seconds).
template <class F>
double best_time(int repeats, F&& f) {
  double best = 1e300;
  for (int r = 0; r < repeats; ++r) {
    auto t = Clock::now();
    f();
    best = std::min(best, seconds_since(t));
  }
  return best;
}

/// Baseline: dW/dt = A W + W A' + B B' on the packed entries with Boost.Odeint RKF78.
Eigen::MatrixXd odeint_reachability(const ordex::System& sys, double t0, double t1, double rtol, double atol,
                                    long* steps) {
  namespace odeint = boost::numeric::odeint;
  const int n = sys.states(), m = sys.inputs();
  Eigen::MatrixXd a(n, n), b(n, m), w(n, n), aw(n, n), rhs(n, n);
  using State = std::vector<double>;
  State y(static_cast<std::size_t>(ordex::packed_size(n)), 0.0);
  auto f = [&](const State& x, State& dx, double t) {
    sys.A(t, a);
    sys.B(t, b);
    ordex::unpack_symmetric(x.data(), w);
    aw.noalias() = a * w;
    rhs = aw + aw.transpose();
    rhs.noalias() += b * b.transpose();
    dx.resize(x.size());
    ordex::pack_symmetric(rhs, dx.data());
  };
  auto stepper = odeint::make_controlled(atol, rtol, odeint::runge_kutta_fehlberg78<State>());
  *steps = static_cast<long>(odeint::integrate_adaptive(stepper, f, y, t0, t1, (t1 - t0) * 1e-3));
  ordex::unpack_symmetric(y.data(), w);
  return w;
}

double rel_err(const Eigen::MatrixXd& w, const Eigen::MatrixXd& ref) { return (w - ref).norm() / ref.norm(); }

void compare(const char* name, const ordex::System& sys, double t0, double t1, const std::vector<double>& tols, int repeats,
             bool bdf = false) {
  ordex::GramianOptions ref_opts;
  ref_opts.kind = ordex::GramianKind::Reachability;
  ref_opts.propagation.rtol = 1e-13;
  ref_opts.propagation.atol = 1e-16;
  ref_opts.threads = 1;
  const Eigen::MatrixXd ref = ordex::compute_gramian(sys, t0, t1, ref_opts).gramian;
  std::printf("\n%s: n = %d, m = %d, window [%g, %g]; reference: block route at rtol 1e-13\n", name, sys.states(),
              sys.inputs(), t0, t1);
  std::printf("%-34s %8s %10s %8s %12s\n", "method", "rtol", "time [ms]", "steps", "rel. error");
  for (double rtol : tols) {
    const double atol = rtol * 1e-3 * ref.cwiseAbs().maxCoeff();
    for (int threads : {1, 2}) {
      ordex::GramianOptions o = ref_opts;
      o.propagation.rtol = rtol;
      o.propagation.atol = atol;
      o.threads = threads;
      // Two threads need at least two intervals: the window split in halves.
      std::vector<double> grid;
      if (threads == 2) grid = {t0, 0.5 * (t0 + t1), t1};
      ordex::GramianResult r;
      double t = best_time(repeats, [&] { r = ordex::compute_gramian(sys, t0, t1, o, grid); });
      std::printf("%-34s %8.0e %10.2f %8ld %12.2e\n", threads == 1 ? "block (engine, magnus6)" : "block, 2 threads",
                  rtol, 1e3 * t, r.stats.steps, rel_err(r.gramian, ref));
    }
    {
      ordex::GramianOptions o = ref_opts;
      o.route = ordex::GramianRoute::Lyapunov;
      if (bdf) o.propagation.method = ordex::Method::Bdf;
      o.propagation.rtol = rtol;
      o.propagation.atol = atol;
      ordex::GramianResult r;
      double t = best_time(repeats, [&] { r = ordex::compute_gramian(sys, t0, t1, o); });
      std::printf("%-34s %8.0e %10.2f %8ld %12.2e\n", bdf ? "lyapunov (CVODE BDF, exact precond.)" : "lyapunov (CVODE Adams)", rtol, 1e3 * t, r.stats.steps,
                  rel_err(r.gramian, ref));
    }
    {
      long steps = 0;
      Eigen::MatrixXd w;
      double t = best_time(repeats, [&] { w = odeint_reachability(sys, t0, t1, rtol, atol, &steps); });
      std::printf("%-34s %8.0e %10.2f %8ld %12.2e\n", "baseline odeint rkf78 (Lyapunov)", rtol, 1e3 * t, steps,
                  rel_err(w, ref));
    }
  }
}

/// A random time-varying model: A(t) = A0 + sin(t) A1 with A0 = -0.5 I + 0.4 G0/sqrt(n),
/// A1 = 0.3 G1/sqrt(n); B(t) = B0 + cos(0.7 t) B1 (entries standard normal; seed 7).
ordex::FunctionSystem random_model(int n, int m) {
  std::mt19937 gen(7);
  std::normal_distribution<double> g;
  auto rnd = [&](int r, int c) {
    Eigen::MatrixXd x(r, c);
    for (int i = 0; i < r; ++i)
      for (int j = 0; j < c; ++j) x(i, j) = g(gen);
    return x;
  };
  const Eigen::MatrixXd a0 = -0.5 * Eigen::MatrixXd::Identity(n, n) + 0.4 / std::sqrt(n) * rnd(n, n);
  const Eigen::MatrixXd a1 = 0.3 / std::sqrt(n) * rnd(n, n);
  const Eigen::MatrixXd b0 = rnd(n, m), b1 = 0.5 * rnd(n, m);
  std::vector<std::string> s, u;
  for (int i = 0; i < n; ++i) s.push_back("x" + std::to_string(i + 1));
  for (int i = 0; i < m; ++i) u.push_back("u" + std::to_string(i + 1));
  ordex::FunctionSystem sys(s, "random n = " + std::to_string(n));
  sys.set_A([a0, a1](double t, ordex::MatrixRef o) { o = a0 + std::sin(t) * a1; });
  sys.set_B(u, [b0, b1](double t, ordex::MatrixRef o) { o = b0 + std::cos(0.7 * t) * b1; });
  return sys;
}

/// A stiff time-varying model: A(t) = -diag(1, ..., 10^3 spread geometrically) + (0.5 + 0.3 sin t)
/// G / sqrt(n) (G standard normal, seed 11), B(t) = B0 (1 + 0.2 cos t).
ordex::FunctionSystem stiff_model(int n, int m) {
  std::mt19937 gen(11);
  std::normal_distribution<double> g;
  Eigen::MatrixXd d = Eigen::MatrixXd::Zero(n, n), c(n, n), b0(n, m);
  for (int i = 0; i < n; ++i) d(i, i) = -std::pow(1e3, static_cast<double>(i) / (n - 1));
  for (int i = 0; i < n; ++i)
    for (int j = 0; j < n; ++j) c(i, j) = g(gen) / std::sqrt(n);
  for (int i = 0; i < n; ++i)
    for (int j = 0; j < m; ++j) b0(i, j) = g(gen);
  std::vector<std::string> s, u;
  for (int i = 0; i < n; ++i) s.push_back("x" + std::to_string(i + 1));
  for (int i = 0; i < m; ++i) u.push_back("u" + std::to_string(i + 1));
  ordex::FunctionSystem sys(s, "stiff n = " + std::to_string(n));
  sys.set_A([d, c](double t, ordex::MatrixRef o) { o = d + (0.5 + 0.3 * std::sin(t)) * c; });
  sys.set_B(u, [b0](double t, ordex::MatrixRef o) { o = (1 + 0.2 * std::cos(t)) * b0; });
  return sys;
}

void profile_cost(const char* name, const ordex::System& sys, double t0, double t1, double length, int repeats) {
  ordex::PropagationOptions prop;
  prop.rtol = 1e-8;
  prop.atol = 1e-10;
  ordex::GramianOptions one;
  one.propagation = prop;
  one.threads = 1;
  double t_one = best_time(repeats, [&] { ordex::compute_gramian(sys, t0, t1, one); });
  ordex::GramianOptions one2 = one;
  one2.threads = 2;
  double t_one2 = best_time(repeats, [&] { ordex::compute_gramian(sys, t0, t1, one2, {t0, 0.5 * (t0 + t1), t1}); });
  ordex::ProfileOptions p;
  p.window_length = length;
  p.stride = (t1 - t0 - length) / 999;
  ordex::ProfileReport rep;
  double t_prof = best_time(repeats, [&] { rep = ordex::sliding_profile(sys, ordex::GramianKind::Controllability, t0, t1, p, prop); });
  p.threads = 1;
  double t_prof1 = best_time(repeats, [&] { ordex::sliding_profile(sys, ordex::GramianKind::Controllability, t0, t1, p, prop); });
  std::printf("\n%s: profile of %zu windows of length %g over [%g, %g] (grid %zu times, %zu recomposed), rtol 1e-8\n",
              name, rep.windows.size(), length, t0, t1, rep.grid_points, rep.recomposed);
  std::vector<double> est;
  for (const auto& w : rep.windows) est.push_back(w.estimated_error);
  std::sort(est.begin(), est.end());
  std::printf("  difference check: estimated relative error min %.1e, median %.1e, max %.1e (limit %.0e)\n",
              est.front(), est[est.size() / 2], est.back(), p.check_fraction);
  std::printf("  one Gramian over the horizon: %.2f ms (1 thread), %.2f ms (2 threads)\n", 1e3 * t_one, 1e3 * t_one2);
  std::printf("  profile: %.2f ms (2 threads), %.2f ms (1 thread); ratio to one Gramian (2 threads each): %.1f\n",
              1e3 * t_prof, 1e3 * t_prof1, t_prof / t_one2);
}

}  // namespace

int main(int argc, char** argv) {
  const bool quick = argc > 1 && std::strcmp(argv[1], "--quick") == 0;
  if (argc > 1 && std::strcmp(argv[1], "--stiff") == 0) {
    auto stiff = stiff_model(16, 2);
    compare("stiff model", stiff, 0, 5, {1e-8}, 1, true);
    return 0;
  }
  if (argc > 1 && std::strcmp(argv[1], "--profile48") == 0) {
    auto big = random_model(48, 4);
    profile_cost("random n = 48", big, 0, 10, 2.5, 1);
    return 0;
  }
  auto orbit = ordex::load_model(std::string(ORDEX_MODELS_DIR) + "/orbit_relative_motion.toml");
  const double period = 2 * M_PI * std::sqrt(std::pow(9200.0, 3) / 398600.4418);
  compare("orbit_relative_motion.toml, one revolution", *orbit, 0, period, {1e-6, 1e-8, 1e-10}, quick ? 1 : 5);
  auto big = random_model(48, 4);
  compare("random model", big, 0, 10, quick ? std::vector<double>{1e-8} : std::vector<double>{1e-6, 1e-8, 1e-10},
          quick ? 1 : 2);
  auto stiff = stiff_model(16, 2);
  compare("stiff model (eigenvalues of A(t) from -1 to about -1e3)", stiff, 0, 5, {1e-8}, 1, true);
  profile_cost("orbit", *orbit, 0, period, period / 4, quick ? 1 : 3);
  profile_cost("random n = 48", big, 0, 10, 2.5, 1);
  return 0;
}
