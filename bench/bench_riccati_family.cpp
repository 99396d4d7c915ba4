// The Riccati family on the 40-state flexible stack (models/flexible_stack.toml, 60 s window):
// the transition matrix Phi over the window by the default method, then the regulator, the
// Kalman-Bucy filter and a covariance analysis with their default options, each timed in this
// one run and divided by Phi's time (issue 9: regulator <= 5x Phi; issue 13: filter and
// covariance analysis <= 5x Phi). Wall time and process CPU time are both printed: the
// machine is shared, so compare ratios within one run and repeat.
//
// Accuracy: each P is also compared with a reference from the same route at rtol 1e-12 (the
// regulator's P(t0), the estimator's P over the whole history), so a faster default that lost
// accuracy shows up here.
//
//   cmake -S . -B build -DCMAKE_BUILD_TYPE=Release -DORDEX_BENCH=ON
//   cmake --build build --target ordex_bench_riccati_family -j2
//   build/bin/ordex_bench_riccati_family [--repeats N] [--no-reference] [--quick]
// --quick leaves out the cross-checked defaults and the Hamiltonian routes.
#include <time.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <functional>
#include <string>
#include <vector>

#include "estimation/estimate.hpp"
#include "estimation/noise.hpp"
#include "estimation/sensor_schedule.hpp"
#include "model/model_file.hpp"
#include "propagation/generator.hpp"
#include "propagation/propagator.hpp"
#include "riccati/regulator.hpp"

using namespace ordex;

namespace {

const std::string kModels = ORDEX_MODELS_DIR;
const std::string kBenchData = kModels + "/../bench/data";

double cpu_now() {
  timespec ts{};
  clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &ts);
  return double(ts.tv_sec) + 1e-9 * double(ts.tv_nsec);
}

struct Timing {
  double wall = 1e300, cpu = 1e300;  // best of the repeats
};

Timing time_it(int repeats, const std::function<void()>& job) {
  Timing t;
  for (int r = 0; r < repeats; ++r) {
    const auto w0 = std::chrono::steady_clock::now();
    const double c0 = cpu_now();
    job();
    t.cpu = std::min(t.cpu, cpu_now() - c0);
    t.wall = std::min(t.wall, std::chrono::duration<double>(std::chrono::steady_clock::now() - w0).count());
  }
  return t;
}

double max_relative_gap(const std::vector<Eigen::MatrixXd>& a, const std::vector<Eigen::MatrixXd>& b) {
  if (a.size() != b.size()) return NAN;
  double gap = 0, scale = 1e-300;
  for (std::size_t k = 0; k < a.size(); ++k) {
    gap = std::max(gap, (a[k] - b[k]).norm());
    scale = std::max(scale, b[k].norm());
  }
  return gap / scale;
}

}  // namespace

int main(int argc, char** argv) {
  int repeats = 1;
  bool reference = true, quick = false;
  for (int i = 1; i < argc; ++i) {
    if (!std::strcmp(argv[i], "--repeats") && i + 1 < argc)
      repeats = std::max(1, std::atoi(argv[++i]));
    else if (!std::strcmp(argv[i], "--no-reference"))
      reference = false;
    else if (!std::strcmp(argv[i], "--quick"))
      quick = true;
    else {
      std::fprintf(stderr, "usage: %s [--repeats N] [--no-reference] [--quick]\n", argv[0]);
      return 2;
    }
  }
  const auto sys = load_model(kModels + "/flexible_stack.toml");
  const double t0 = sys->info().window->first, t1 = sys->info().window->second;
  const NoiseModel noise = load_noise(kBenchData + "/flexible_stack_noise.toml", *sys);
  const SensorSchedule schedule = load_sensor_schedule(kBenchData + "/flexible_stack_sensors.toml", *sys, t0, t1);
  std::printf("flexible stack: n = %d, m = %d, p = %d, window [%g, %g]\n", sys->states(), sys->inputs(),
              sys->outputs(), t0, t1);

  // Phi over the window, the default method.
  PropagationStats phi_stats;
  const Timing phi = time_it(repeats, [&] {
    Propagator prop(state_generator(*sys, t0, t1), PropagationOptions{});
    prop.transition(t0, t1);
    phi_stats = prop.stats();
  });
  std::printf("%-44s %9s %9s %8s %8s  %s\n", "job", "wall s", "cpu s", "x Phi", "x Phi", "notes");
  std::printf("%-44s %9s %9s %8s %8s\n", "", "", "", "(wall)", "(cpu)");
  auto row = [&](const std::string& name, const Timing& t, const std::string& note) {
    std::printf("%-44s %9.3f %9.3f %8.2f %8.2f  %s\n", name.c_str(), t.wall, t.cpu, t.wall / phi.wall,
                t.cpu / phi.cpu, note.c_str());
    std::fflush(stdout);
  };
  row("Phi (" + method_name(phi_stats.method) + ")", phi, std::to_string(phi_stats.steps) + " steps");

  // The regulator, default options (weights Q = I, R = I, Qf = 0; every input a control).
  RegulatorReport reg;
  const Timing regulator = time_it(repeats, [&] { reg = regulate(*sys, t0, t1, RegulatorOptions{}); });
  row("regulator (default, with closed-loop check)", regulator,
      reg.riccati.engine + ", " + std::to_string(reg.riccati.steps) + " steps, Riccati " +
          std::to_string(reg.riccati.seconds) + " s, check " + std::to_string(reg.closed_loop.stats.steps) +
          " steps, " + check_status_name(reg.closed_loop.status));
  if (reference) {
    RegulatorOptions tight;
    tight.check_closed_loop = false;
    tight.riccati.propagation.rtol = 1e-12;
    tight.riccati.propagation.atol = 1e-14;
    const RegulatorReport ref = regulate(*sys, t0, t1, tight);
    std::printf("  regulator P(t0) against rtol 1e-12 (%s): relative error %.2e; schedule %.2e\n",
                ref.riccati.engine.c_str(), (reg.P0 - ref.P0).norm() / ref.P0.norm(), max_relative_gap(reg.P, ref.P));
  }

  // The estimator: each route alone, then the default (ode with the Hamiltonian cross-check).
  auto estimator = [&](bool analysis, const std::string& kind) {
    EstimationOptions o;
    o.noise = noise;
    if (analysis) o.schedule = schedule;
    std::vector<Eigen::MatrixXd> P_ode;
    for (RiccatiSolver route : {RiccatiSolver::RiccatiOde, RiccatiSolver::Hamiltonian}) {
      if (quick && route == RiccatiSolver::Hamiltonian) continue;
      EstimationOptions one = o;
      one.solver = route;
      one.cross_check = false;
      EstimationReport r;
      const Timing t = time_it(repeats, [&] { r = estimate(*sys, t0, t1, one); });
      row(kind + ", " + solver_name(route) + " route", t,
          r.engine + ", " + std::to_string(r.steps) + " steps" +
              (analysis ? ", " + std::to_string(r.updates) + " updates" : ""));
      if (route == RiccatiSolver::RiccatiOde) P_ode = r.P;
      if (reference) {
        EstimationOptions tight = one;
        tight.propagation.rtol = 1e-12;
        tight.propagation.atol = 1e-14;
        const EstimationReport ref = estimate(*sys, t0, t1, tight);
        std::printf("  %s route against itself at rtol 1e-12 (%s): max relative error of P over the history %.2e\n",
                    solver_name(route).c_str(), ref.engine.c_str(), max_relative_gap(r.P, ref.P));
      }
    }
    if (quick) return;
    EstimationReport r;
    const Timing t = time_it(repeats, [&] { r = estimate(*sys, t0, t1, o); });
    char agreement[64];
    std::snprintf(agreement, sizeof agreement, "agreement %.2e", r.agreement ? *r.agreement : NAN);
    row(kind + ", default (ode + cross-check)", t, r.agreement ? agreement : "cross-check failed: " + r.check_failure);
  };
  estimator(false, "Kalman-Bucy filter");
  estimator(true, "covariance analysis");
  return 0;
}
