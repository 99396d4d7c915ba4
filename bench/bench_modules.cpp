// Module costs against the transition matrix on a 40-state flexible body (docs/performance.md,
// "Modules on a 40-state flexible body"): models/flexible_stack.toml over its 60 s window, timed
// in one process so that the ratios are comparable on a shared machine:
//   Phi          Phi(60, 0) by the engine's default method;
//   Gramian      the controllability Gramian over the window, block route, as ordex-gramian runs
//                it by default (101 samples, so the sweep has 100 intervals and 2 threads);
//   discrete     the zero-order-hold discrete model on a 10 ms grid (6,000 intervals), steps
//                not kept (as ordex-discretize streams them to its file);
//   profile      1,000 sliding windows of 6 s (stride 54/999 s) of the controllability Gramian;
//   block steps  the Gramian's engine work alone, on one thread: the block generator over the
//                100 grid intervals (each from the identity) with the steps on the blocks
//                (Generator::van_loan_half, the default) against the same steps taken dense,
//                for magnus6 and rk8;
//   exponential  one exponential of the 80 x 80 block generator [[A, B B'], [0, -A']] times 0.02 s
//                at t = 30, on the blocks (block_expm.hpp) against the same matrix taken dense
//                (a 1e-300 entry in its lower-left block turns the block path off).
// Each figure is the best of REPEATS runs, wall time and process CPU time (all threads).
// usage: ordex_bench_modules [--repeats N] [--threads N] [--skip-profile]
#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <ctime>
#include <string>

#include "gramian/gramian.hpp"
#include "gramian/gramian_sweep.hpp"
#include "gramian/profile.hpp"
#include "model/model_file.hpp"
#include "model/time_grid.hpp"
#include "propagation/expm.hpp"
#include "propagation/propagator.hpp"
#include "response/discretize.hpp"

namespace {

using Clock = std::chrono::steady_clock;

struct Cost {
  double wall = 1e300, cpu = 1e300;
};

/// Best wall and best CPU time of REPEATS runs of F.
template <class F>
Cost best_cost(int repeats, F&& f) {
  Cost c;
  for (int r = 0; r < repeats; ++r) {
    const auto w0 = Clock::now();
    const std::clock_t c0 = std::clock();
    f();
    const double cpu = static_cast<double>(std::clock() - c0) / CLOCKS_PER_SEC;
    const double wall = std::chrono::duration<double>(Clock::now() - w0).count();
    c.wall = std::min(c.wall, wall);
    c.cpu = std::min(c.cpu, cpu);
  }
  return c;
}

void row(const char* name, const Cost& c, const Cost& ref, const char* ref_name, const std::string& detail) {
  std::printf("%-34s %8.3f %8.3f   %6.2fx %6.2fx of %-8s %s\n", name, c.wall, c.cpu, c.wall / ref.wall,
              c.cpu / ref.cpu, ref_name, detail.c_str());
}

}  // namespace

int main(int argc, char** argv) {
  int repeats = 2, threads = 2;
  bool profile = true;
  for (int i = 1; i < argc; ++i) {
    if (!std::strcmp(argv[i], "--repeats") && i + 1 < argc) repeats = std::atoi(argv[++i]);
    else if (!std::strcmp(argv[i], "--threads") && i + 1 < argc) threads = std::atoi(argv[++i]);
    else if (!std::strcmp(argv[i], "--skip-profile")) profile = false;
    else {
      std::fprintf(stderr, "usage: %s [--repeats N] [--threads N] [--skip-profile]\n", argv[0]);
      return 2;
    }
  }
  using namespace ordex;
  const std::string path = std::string(ORDEX_MODELS_DIR) + "/flexible_stack.toml";
  std::unique_ptr<System> sys = load_model(path);
  const double t0 = 0, t1 = 60;
  std::printf("%s: n = %d, m = %d, window [%g, %g], best of %d, %d threads where a module uses them\n",
              path.c_str(), sys->states(), sys->inputs(), t0, t1, repeats, threads);
  std::printf("%-34s %8s %8s   %-24s %s\n", "what", "wall [s]", "cpu [s]", "ratio (wall, cpu)", "detail");

  PropagationStats phi_stats;
  const Cost phi = best_cost(repeats, [&] {
    Propagator prop(state_generator(*sys, t0, t1), PropagationOptions{});
    prop.transition(t0, t1);
    phi_stats = prop.stats();
  });
  row("Phi(60, 0)", phi, phi, "Phi", method_name(phi_stats.method) + ", " + std::to_string(phi_stats.steps) + " steps");

  GramianOptions go;
  go.threads = threads;
  const std::vector<double> grid = linspace(t0, t1, 101);
  GramianResult g;
  const Cost gram = best_cost(repeats, [&] { g = compute_gramian(*sys, t0, t1, go, grid); });
  row("Gramian (block, 101 samples)", gram, phi, "Phi", std::to_string(g.stats.steps) + " steps");

  for (const char* method : {"magnus6", "rk8"}) {
    PropagationStats st[2];
    Eigen::MatrixXd last[2];
    Cost cost[2];
    for (int structured = 1; structured >= 0; --structured) {
      cost[structured] = best_cost(repeats, [&] {
        Generator gen = block_generator(input_pair(*sys));
        if (!structured) gen.van_loan_half = 0;
        PropagationOptions o;
        o.method = parse_method(method);
        Propagator prop(std::move(gen), o);
        last[structured] = prop.interval_maps(grid).back();
        st[structured] = prop.stats();
      });
    }
    const std::string m(method);
    row(("block steps, " + m + ", dense").c_str(), cost[0], phi, "Phi", std::to_string(st[0].steps) + " steps");
    char diff[96];
    std::snprintf(diff, sizeof diff, "%ld steps, %.2fx faster than dense, last interval differs by %.1e",
                  st[1].steps, cost[0].cpu / cost[1].cpu,
                  (last[1] - last[0]).cwiseAbs().maxCoeff() / last[0].cwiseAbs().maxCoeff());
    row(("block steps, " + m + ", blocks").c_str(), cost[1], phi, "Phi", diff);
  }

  DiscretizeOptions d;
  d.step = 0.01;
  d.keep_steps = false;
  DiscretizeReport rep;
  const Cost disc = best_cost(repeats, [&] { rep = discretize(*sys, t0, t1, d); });
  row("discrete model, 10 ms, zoh", disc, phi, "Phi",
      std::to_string(rep.computed_steps) + " intervals, " + std::to_string(rep.propagation.steps) + " steps");

  if (profile) {
    ProfileOptions po;
    po.window_length = 6;
    po.stride = 54.0 / 999.0;
    po.threads = threads;
    ProfileReport pr;
    const Cost prof = best_cost(repeats, [&] {
      pr = sliding_profile(*sys, GramianKind::Controllability, t0, t1, po, PropagationOptions{});
    });
    row("profile, 1,000 windows of 6 s", prof, gram, "Gramian",
        std::to_string(pr.windows.size()) + " windows, " + std::to_string(pr.grid_points) + " grid times, " +
            std::to_string(pr.recomposed) + " recomposed, " + std::to_string(pr.stats.steps) + " steps");
  }
  {
    const int n = sys->states();
    Eigen::MatrixXd a(n, n), b(n, sys->inputs());
    sys->A(30.0, a);
    sys->B(30.0, b);
    Eigen::MatrixXd g = Eigen::MatrixXd::Zero(2 * n, 2 * n);
    g.topLeftCorner(n, n) = a;
    g.topRightCorner(n, n) = b * b.transpose();
    g.bottomRightCorner(n, n) = -a.transpose();
    g *= 0.02;
    Eigen::MatrixXd dense = g, e1, e2;
    dense(2 * n - 1, 0) = 1e-300;
    MatrixExponential ex;
    const int count = 500;
    const Cost blocks = best_cost(repeats, [&] { for (int i = 0; i < count; ++i) ex.compute(g, e1); });
    const Cost full = best_cost(repeats, [&] { for (int i = 0; i < count; ++i) ex.compute(dense, e2); });
    row("500 exponentials 80 x 80, dense", full, full, "dense", "");
    char diff[64];
    std::snprintf(diff, sizeof diff, "largest difference %.1e of the largest entry",
                  (e1 - e2).cwiseAbs().maxCoeff() / e2.cwiseAbs().maxCoeff());
    row("500 exponentials 80 x 80, blocks", blocks, full, "dense", diff);
  }
  return 0;
}
