// Riccati solvers against a Boost.Odeint baseline (runge_kutta_fehlberg78, controlled, on the
// same packed n(n+1)/2 Riccati right-hand side) on n = 6 (the orbit model), 24 and 48 (a chain
// of oscillators with modulated springs), with a 1,000-sample gain schedule. Each run's
// accuracy is measured against a tight reference (Odeint RKF78 at rtol 1e-13) at every sample.
//   cmake -S . -B build -DCMAKE_BUILD_TYPE=Release -DORDEX_BENCH=ON
//   cmake --build build --target ordex_bench_riccati && build/bin/ordex_bench_riccati [filter]
//   [--samples N] [--repeats N] [--hamiltonian]: each solver over a scan of rtol, then the cheapest
//   run of each that reaches a given accuracy (matched accuracy, not equal tolerance).
#include <boost/numeric/odeint.hpp>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <algorithm>
#include <memory>
#include <string>
#include <vector>

#include "model/time_grid.hpp"
#include "model/function_system.hpp"
#include "model/model_file.hpp"
#include "propagation/symmetric_packing.hpp"
#include "riccati/lqr_coefficients.hpp"
#include "riccati/riccati_routes.hpp"
#include "riccati/riccati_solver.hpp"
#include "riccati/weights.hpp"

using namespace ordex;
using ordex::pack_symmetric;
using ordex::unpack_symmetric;
using Clock = std::chrono::steady_clock;

namespace {

struct Problem {
  std::string name;
  std::unique_ptr<System> sys;
  Weights w;
  double t0, t1;
};

// k masses in a line, springs to the neighbours and to the ground with stiffness modulated in
// time, light damping; every third mass has an actuator. n = 2k states.
Problem chain(int k) {
  auto sys = std::make_unique<FunctionSystem>([k] {
    std::vector<std::string> s;
    for (int i = 0; i < 2 * k; ++i) s.push_back("s" + std::to_string(i + 1));
    return s;
  }());
  sys->set_A([k](double t, MatrixRef a) {
    a.setZero();
    a.topRightCorner(k, k).setIdentity();
    for (int i = 0; i < k; ++i) {
      const double ki = 1.0 + 0.3 * std::sin(0.7 * t + 0.4 * i);
      a(k + i, i) -= ki + (i + 1 < k ? 1.0 : 0.0);
      if (i + 1 < k) {
        a(k + i, i + 1) += 1.0;
        a(k + i + 1, i) += 1.0;
        a(k + i + 1, i + 1) -= 1.0;
      }
      a(k + i, k + i) = -0.05;
    }
  });
  const int m = (k + 2) / 3;
  std::vector<std::string> inputs;
  for (int j = 0; j < m; ++j) inputs.push_back("u" + std::to_string(j + 1));
  sys->set_B(inputs, [k, m](double, MatrixRef b) {
    b.setZero();
    for (int j = 0; j < m; ++j) b(k + 3 * j, j) = 1.0;
  });
  Problem p;
  p.name = "chain n=" + std::to_string(2 * k);
  p.w = default_weights(2 * k, m);
  p.w.Qf = WeightMatrix::constant(Eigen::MatrixXd::Identity(2 * k, 2 * k), "Qf");
  p.sys = std::move(sys);
  p.t0 = 0;
  p.t1 = 20;
  return p;
}

// Heat conduction along a rod of `cells` cells with a conductivity that varies in time, heaters
// at every sixth cell: x' = kappa(t) (cells+1)^2 L x + B u, L the second-difference matrix.
// Its fastest modes decay at about 4 kappa (cells+1)^2: a stiff plant, as conduction is.
Problem rod(int cells) {
  auto sys = std::make_unique<FunctionSystem>([cells] {
    std::vector<std::string> s;
    for (int i = 0; i < cells; ++i) s.push_back("T" + std::to_string(i + 1));
    return s;
  }());
  sys->set_A([cells](double t, MatrixRef a) {
    const double k = 2.0 * (1.0 + 0.3 * std::sin(5.0 * t)) * (cells + 1) * (cells + 1);
    a.setZero();
    for (int i = 0; i < cells; ++i) {
      a(i, i) = -2 * k;
      if (i > 0) a(i, i - 1) = k;
      if (i + 1 < cells) a(i, i + 1) = k;
    }
  });
  const int m = cells / 6;
  std::vector<std::string> inputs;
  for (int j = 0; j < m; ++j) inputs.push_back("h" + std::to_string(j + 1));
  sys->set_B(inputs, [m](double, MatrixRef b) {
    b.setZero();
    for (int j = 0; j < m; ++j) b(6 * j + 3, j) = 1.0;
  });
  Problem p;
  p.name = "rod n=" + std::to_string(cells);
  p.w = default_weights(cells, m);
  p.w.R = WeightMatrix::constant(0.1 * Eigen::MatrixXd::Identity(m, m), "R");
  p.w.Qf = WeightMatrix::constant(Eigen::MatrixXd::Identity(cells, cells), "Qf");
  p.sys = std::move(sys);
  p.t0 = 0;
  p.t1 = 2;
  return p;
}

Problem orbit() {
  Problem p;
  p.name = "orbit n=6";
  p.sys = load_model(std::string(ORDEX_MODELS_DIR) + "/orbit_relative_motion.toml");
  p.w = default_weights(6, 3);
  // Position 1 per km^2 s, acceleration 6e10 per (km/s^2)^2 s, terminal pinning (as the demo).
  Eigen::VectorXd q(6), qf(6);
  q << 1, 1, 1, 0, 0, 0;
  qf << 100, 100, 100, 1e7, 1e7, 1e7;
  p.w.Q = WeightMatrix::constant(q.asDiagonal().toDenseMatrix(), "Q");
  p.w.R = WeightMatrix::constant(6e10 * Eigen::MatrixXd::Identity(3, 3), "R");
  p.w.Qf = WeightMatrix::constant(qf.asDiagonal().toDenseMatrix(), "Qf");
  p.t0 = p.sys->info().window->first;
  p.t1 = p.sys->info().window->second;
  return p;
}

using State = std::vector<double>;

// P at every sample (ascending) by Odeint RKF78, backwards from t1.
std::vector<Eigen::MatrixXd> odeint_solve(const Problem& p, const std::vector<double>& times, double rtol,
                                          double atol, long& steps) {
  namespace oi = boost::numeric::odeint;
  const int n = p.sys->states();
  LqrCoefficients coeff(*p.sys, p.w);
  Eigen::MatrixXd P(n, n), dP(n, n), K(p.sys->inputs(), n);
  auto rhs = [&](const State& y, State& dy, double t) {
    unpack_symmetric(y.data(), P);
    coeff.at(t);
    coeff.riccati_rhs(P, dP, K);
    pack_symmetric(dP, dy.data());
  };
  State y(static_cast<std::size_t>(n * (n + 1) / 2));
  pack_symmetric(p.w.Qf.at(p.t1), y.data());
  std::vector<double> backward(times.rbegin(), times.rend());
  std::vector<Eigen::MatrixXd> out(times.size(), Eigen::MatrixXd(n, n));
  std::size_t idx = times.size();
  auto stepper = oi::make_controlled(atol, rtol, oi::runge_kutta_fehlberg78<State>());
  steps = static_cast<long>(oi::integrate_times(stepper, rhs, y, backward.begin(), backward.end(),
                                                -(p.t1 - p.t0) / 1000.0, [&](const State& s, double) {
                                                  unpack_symmetric(s.data(), out[--idx]);
                                                }));
  return out;
}

double max_error(const std::vector<Eigen::MatrixXd>& a, const std::vector<Eigen::MatrixXd>& ref) {
  double scale = 0, err = 0;
  for (std::size_t k = 0; k < ref.size(); ++k) {
    scale = std::max(scale, ref[k].cwiseAbs().maxCoeff());
    err = std::max(err, (a[k] - ref[k]).cwiseAbs().maxCoeff());
  }
  return err / scale;
}

// One timed run: the best of `repeats` wall times, with the steps and the error of the last.
// SOLVE fills the run and returns the seconds of its solve alone (not of the error check).
struct Run {
  double rtol = 0, seconds = 0, error = 0;
  long steps = 0;
  std::string label, failure;
  bool ok = false;
};

double seconds_since(Clock::time_point start) {
  return std::chrono::duration<double>(Clock::now() - start).count();
}

// A failed solve is not repeated.
template <class Solve>
Run timed(double rtol, int repeats, Solve&& solve) {
  Run r;
  r.rtol = rtol;
  r.seconds = 1e300;
  for (int k = 0; k < repeats; ++k) {
    r.seconds = std::min(r.seconds, solve(r));
    if (!r.ok) break;
  }
  return r;
}

// The cheapest run whose error is at most `target`, or nullptr.
const Run* cheapest(const std::vector<Run>& runs, double target) {
  const Run* best = nullptr;
  for (const Run& r : runs)
    if (r.ok && r.error <= target && (!best || r.seconds < best->seconds)) best = &r;
  return best;
}

void usage() {
  std::printf(
      "ordex_bench_riccati [filter] [--samples N] [--repeats N] [--hamiltonian]\n"
      "  filter        keep only the problems whose name contains it (\"rod\", \"n=48\")\n"
      "  --samples N   times at which P is wanted, ends included (default 1000). With few\n"
      "                samples the tolerance, not the sample grid, sets the baseline's steps.\n"
      "  --repeats N   best of N wall times per run (default 1)\n"
      "  --hamiltonian also run the Hamiltonian route (slow on the chains)\n"
      "Scans rtol 1e-5 .. 1e-12 (atol = rtol / 100) for the baseline and the ODE route, prints\n"
      "every run, then the cheapest run of each that reaches 1e-6 and 1e-9 relative error\n"
      "against the baseline at rtol 1e-13 (matched accuracy) and the ratio of their times.\n");
}

}  // namespace

int main(int argc, char** argv) {
  int samples = 1000, repeats = 1;
  bool hamiltonian = false;
  std::string only;
  for (int i = 1; i < argc; ++i) {
    const std::string a = argv[i];
    if ((a == "--samples" || a == "--repeats") && i + 1 < argc) {
      const int v = std::atoi(argv[++i]);
      if (v < (a == "--samples" ? 2 : 1)) {
        std::fprintf(stderr, "%s: %s is too small\n", a.c_str(), argv[i]);
        return 2;
      }
      (a == "--samples" ? samples : repeats) = v;
    } else if (a == "--hamiltonian") {
      hamiltonian = true;
    } else if (a == "--help" || a == "-h") {
      usage();
      return 0;
    } else if (!a.empty() && a[0] == '-') {
      std::fprintf(stderr, "unknown option %s (see --help)\n", a.c_str());
      return 2;
    } else {
      only = a;
    }
  }
  const std::vector<double> tolerances = {1e-5, 1e-6, 1e-7, 1e-8, 1e-9, 1e-10, 1e-11, 1e-12};
  const std::vector<double> targets = {1e-6, 1e-9};
  std::vector<Problem> problems;
  problems.push_back(orbit());
  problems.push_back(chain(3));
  problems.push_back(chain(12));
  problems.push_back(chain(24));
  problems.push_back(rod(24));
  problems.push_back(rod(48));
  std::printf("%d samples, best of %d\n", samples, repeats);
  std::printf("%-12s %-16s %7s %10s %8s %10s %12s\n", "problem", "method", "rtol", "seconds", "steps", "us/step",
              "max rel err");
  std::vector<std::string> summary;
  for (const Problem& p : problems) {
    if (!only.empty() && p.name.find(only) == std::string::npos) continue;
    const auto times = linspace(p.t0, p.t1, samples);
    long ref_steps = 0;
    const auto ref = odeint_solve(p, times, 1e-13, 1e-15, ref_steps);
    auto print = [&](const Run& r) {
      if (r.ok)
        std::printf("%-12s %-16s %7.0e %10.4f %8ld %10.2f %12.2e\n", p.name.c_str(), r.label.c_str(), r.rtol,
                    r.seconds, r.steps, 1e6 * r.seconds / std::max(1L, r.steps), r.error);
      else
        std::printf("%-12s %-16s %7.0e failed: %s\n", p.name.c_str(), r.label.c_str(), r.rtol, r.failure.c_str());
      std::fflush(stdout);
    };
    std::vector<Run> base_runs, ode_runs, ham_runs;
    for (double rtol : tolerances) {
      const double atol = 1e-2 * rtol;
      base_runs.push_back(timed(rtol, repeats, [&](Run& r) {
        r.label = "odeint-rkf78";
        const auto start = Clock::now();
        const auto P = odeint_solve(p, times, rtol, atol, r.steps);
        const double sec = seconds_since(start);
        r.error = max_error(P, ref);
        r.ok = true;
        return sec;
      }));
      print(base_runs.back());
      for (RiccatiSolver s : {RiccatiSolver::RiccatiOde, RiccatiSolver::Hamiltonian}) {
        if (s == RiccatiSolver::Hamiltonian && !hamiltonian) continue;
        RiccatiOptions o;
        o.solver = s;
        o.propagation.rtol = rtol;
        o.propagation.atol = atol;
        o.dense_intervals = samples - 1;  // the dense grid is the sample grid
        Run r = timed(rtol, repeats, [&](Run& run) {
          run.label = s == RiccatiSolver::RiccatiOde ? "ode" : "hamiltonian";
          const auto start = Clock::now();
          try {
            RiccatiSolution sol = solve_riccati(*p.sys, p.w, times, o);
            const double sec = seconds_since(start);
            if (s == RiccatiSolver::RiccatiOde) run.label = "ode " + sol.stats.engine;  // the probe's choice
            std::vector<Eigen::MatrixXd> at;
            for (std::size_t k = 0; k < times.size(); ++k) at.push_back(sol.P[sol.output_index[k]]);
            run.steps = sol.stats.steps;
            run.error = max_error(at, ref);
            run.ok = true;
            return sec;
          } catch (const std::exception& e) {
            run.failure = e.what();
            run.ok = false;
            return seconds_since(start);
          }
        });
        print(r);
        (s == RiccatiSolver::RiccatiOde ? ode_runs : ham_runs).push_back(r);
      }
    }
    for (double target : targets) {
      const Run* b = cheapest(base_runs, target);
      for (const std::vector<Run>* runs : {&ode_runs, &ham_runs}) {
        if (runs->empty()) continue;
        const Run* m = cheapest(*runs, target);
        char line[256];
        if (b && m)
          std::snprintf(line, sizeof line, "%-12s %-8.0e %-16s rtol %7.0e %9.4f s  | rkf78 rtol %7.0e %9.4f s | %6.2fx",
                        p.name.c_str(), target, m->label.c_str(), m->rtol, m->seconds, b->rtol, b->seconds,
                        b->seconds / m->seconds);
        else
          std::snprintf(line, sizeof line, "%-12s %-8.0e %-16s %s", p.name.c_str(), target,
                        runs == &ode_runs ? "ode" : "hamiltonian",
                        m ? "the baseline never reached it" : "never reached it");
        summary.push_back(line);
      }
    }
  }
  std::printf("\nmatched accuracy: the cheapest run of each reaching the target (speed-up = rkf78 / method)\n");
  std::printf("%-12s %-8s %s\n", "problem", "target", "method, its rtol and time | baseline | speed-up");
  for (const std::string& l : summary) std::printf("%s\n", l.c_str());
  return 0;
}
