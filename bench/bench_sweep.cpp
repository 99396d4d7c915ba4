// Benchmark of the sweep (lib/sweep, ordex-sweep): a 10,000-point Floquet chart of the pumped
// oscillator rig (models/pumped_oscillator_chart.toml, detuning -0.4..0.4 x pump 0..0.8, 100 x
// 100 points, one period each, the engine's defaults).
//
//   loop      the plain library loop a user would write with no sweep: one model, its swept
//             parameters set in place (ExpressionSystem::set_parameters) and propagate() with
//             the Floquet analysis at each point; the figures kept. No per-point start-up.
//   reload    the loop through load_model with --set-style overrides at each point (what a
//             sweep without in-place parameters costs: the file read and parsed per point),
//             on the first 500 points only.
//   sweep K   run_points_on_threads on K threads with the job ordex-sweep uses (make_floquet_job)
//             and each row formatted as the CSV's (sweep_row) and kept in memory.
//
// The cases run interleaved, REPEATS times, so that a load from other processes on the shared
// machine falls on all of them alike; wall time (steady clock) and the process's CPU time (all
// threads, getrusage) are printed per repeat. Ratios: sweep 1 / loop (the sweep's overhead per
// point) and sweep 1 / sweep 2 (the speed-up of two threads).
//
// For instruction counts that repeat exactly (valgrind --tool=callgrind), one case alone:
//   ordex_bench_sweep loop N      ordex_bench_sweep sweep N
// run at two N; the difference divided by the difference of N is the cost of one point without
// the set-up.
#include <sys/resource.h>

#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <memory>
#include <numeric>
#include <string>
#include <vector>

#include "model/model_file.hpp"
#include "propagation/propagate_report.hpp"
#include "sweep/sweep.hpp"

using namespace ordex;

namespace {

const std::string kModel = std::string(ORDEX_MODELS_DIR) + "/pumped_oscillator_chart.toml";

double wall() { return std::chrono::duration<double>(std::chrono::steady_clock::now().time_since_epoch()).count(); }

double cpu() {
  rusage u{};
  getrusage(RUSAGE_SELF, &u);
  return static_cast<double>(u.ru_utime.tv_sec + u.ru_stime.tv_sec) +
         1e-6 * static_cast<double>(u.ru_utime.tv_usec + u.ru_stime.tv_usec);
}

struct Chart {
  std::unique_ptr<System> model = load_model(kModel);
  SweepPoints points = SweepPoints::grid({parse_grid_axis("detuning=-0.4:0.4:100"), parse_grid_axis("pump=0:0.8:100")});
  std::unique_ptr<ExpressionSystem> base = make_sweep_system(*model, points.names());
};

/// The plain loop over the first N points; returns a checksum of the figures.
double run_loop(const Chart& c, std::size_t n) {
  std::unique_ptr<System> copy = c.base->clone();
  auto& sys = dynamic_cast<ExpressionSystem&>(*copy);
  PropagateOptions o;
  o.floquet = true;
  o.liouville = false;
  const double t0 = 0, t1 = floquet_window_end(sys, t0);
  double sum = 0;
  for (std::size_t k = 0; k < n; ++k) {
    sys.set_parameters(c.points.values(k));
    const PropagateReport r = propagate(sys, t0, t1, o);
    sum += r.floquet->largest_modulus + (r.floquet->stable ? 1 : 0);
  }
  return sum;
}

/// The loop with the model loaded again, with the point's values, at every point.
double run_reload(const Chart& c, std::size_t n) {
  PropagateOptions o;
  o.floquet = true;
  o.liouville = false;
  double sum = 0;
  for (std::size_t k = 0; k < n; ++k) {
    const std::vector<double> v = c.points.values(k);
    ParameterOverrides set;
    for (std::size_t i = 0; i < v.size(); ++i) set[c.points.names()[i]] = v[i];
    const std::unique_ptr<System> sys = load_model(kModel, set);
    const PropagateReport r = propagate(*sys, 0, floquet_window_end(*sys, 0), o);
    sum += r.floquet->largest_modulus + (r.floquet->stable ? 1 : 0);
  }
  return sum;
}

/// The sweep over the first N points on THREADS threads; returns the same checksum.
double run_sweep(const Chart& c, std::size_t n, int threads) {
  const System& base = *c.base;
  SweepJobFactory make_job = [&base] { return make_floquet_job(base, 0.0, PropagationOptions{}); };
  std::vector<std::size_t> todo(n);
  std::iota(todo.begin(), todo.end(), std::size_t(0));
  std::string table;
  double sum = 0;
  run_points_on_threads(base, make_job, c.points, todo, threads, [&](std::size_t k, const PointResult& r) {
    table += sweep_row(c.points.values(k), r);
    table += '\n';
    sum += r.figures[0] + r.figures[1];
  });
  return sum;
}

struct Timing {
  double wall = 0, cpu = 0, checksum = 0;
};

template <class F>
Timing timed(F f) {
  const double w = wall(), c = cpu();
  Timing t;
  t.checksum = f();
  t.wall = wall() - w;
  t.cpu = cpu() - c;
  return t;
}

}  // namespace

int main(int argc, char** argv) {
  const std::string mode = argc > 1 ? argv[1] : "all";
  Chart c;
  const std::size_t total = c.points.size();
  if (mode == "loop" || mode == "sweep") {
    const std::size_t n = argc > 2 ? std::strtoul(argv[2], nullptr, 10) : total;
    if (n < 1 || n > total) {
      std::fprintf(stderr, "N must be in [1, %zu]\n", total);
      return 2;
    }
    const double sum = mode == "loop" ? run_loop(c, n) : run_sweep(c, n, 1);
    std::printf("%s %zu points: checksum %.17g\n", mode.c_str(), n, sum);
    return 0;
  }
  if (mode != "all") {
    std::fprintf(stderr, "usage: ordex_bench_sweep [all [REPEATS] | loop N | sweep N]\n");
    return 2;
  }
  const int repeats = argc > 2 ? std::atoi(argv[2]) : 3;
  const std::size_t nreload = 500;
  std::printf("Floquet chart of %s: %zu points (detuning x pump, 100 x 100), one period each, engine defaults\n",
              kModel.c_str(), total);
  std::printf("%-7s %-22s %10s %10s %14s %14s\n", "repeat", "case", "wall s", "cpu s", "wall us/point",
              "cpu us/point");
  auto line = [](int rep, const char* name, const Timing& t, std::size_t n) {
    std::printf("%-7d %-22s %10.3f %10.3f %14.1f %14.1f\n", rep, name, t.wall, t.cpu, 1e6 * t.wall / double(n),
                1e6 * t.cpu / double(n));
  };
  for (int rep = 1; rep <= repeats; ++rep) {
    const Timing loop = timed([&] { return run_loop(c, total); });
    const Timing s1 = timed([&] { return run_sweep(c, total, 1); });
    const Timing s2 = timed([&] { return run_sweep(c, total, 2); });
    const Timing reload = timed([&] { return run_reload(c, nreload); });
    line(rep, "loop (library)", loop, total);
    line(rep, "sweep, 1 thread", s1, total);
    line(rep, "sweep, 2 threads", s2, total);
    line(rep, "reload per point (500)", reload, nreload);
    if (loop.checksum != s1.checksum || s1.checksum != s2.checksum) {
      std::printf("checksums differ: %.17g %.17g %.17g\n", loop.checksum, s1.checksum, s2.checksum);
      return 1;
    }
    std::printf("        sweep 1 thread / loop: wall %.3f, cpu %.3f; speed-up of 2 threads (wall): %.2fx; "
                "reload / loop per point: %.1fx\n",
                s1.wall / loop.wall, s1.cpu / loop.cpu, s1.wall / s2.wall,
                (reload.cpu / double(nreload)) / (loop.cpu / double(total)));
  }
  return 0;
}
