// Riccati solvers against a Boost.Odeint baseline (runge_kutta_fehlberg78, controlled, on the
// same packed n(n+1)/2 Riccati right-hand side) on n = 6 (the orbit model), 24 and 48 (a chain
// of oscillators with modulated springs), with a 1,000-sample gain schedule. Each run's
// accuracy is measured against a tight reference (Odeint RKF78 at rtol 1e-13) at every sample.
//   cmake -S . -B build -DCMAKE_BUILD_TYPE=Release -DORDEX_BENCH=ON
//   cmake --build build --target ordex_bench_riccati && build/bin/ordex_bench_riccati [filter]
#include <boost/numeric/odeint.hpp>
#include <chrono>
#include <cmath>
#include <cstdio>
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

}  // namespace

int main(int argc, char** argv) {
  const int samples = 1000;
  std::vector<double> tolerances = {1e-6, 1e-8, 1e-10};
  std::vector<Problem> problems;
  problems.push_back(orbit());
  problems.push_back(chain(3));
  problems.push_back(chain(12));
  problems.push_back(chain(24));
  problems.push_back(rod(24));
  problems.push_back(rod(48));
  std::printf("%-12s %-15s %7s %10s %8s %10s %12s %10s\n", "problem", "method", "rtol", "seconds", "steps",
              "us/step", "max rel err", "speedup");
  // An optional argument keeps only the problems whose name contains it ("rod", "n=48").
  const std::string only = argc > 1 ? argv[1] : "";
  for (const Problem& p : problems) {
    if (!only.empty() && p.name.find(only) == std::string::npos) continue;
    const auto times = linspace(p.t0, p.t1, samples);
    long ref_steps = 0;
    auto ref = odeint_solve(p, times, 1e-13, 1e-15, ref_steps);
    for (double rtol : tolerances) {
      const double atol = 1e-2 * rtol;
      long steps = 0;
      auto start = Clock::now();
      auto base = odeint_solve(p, times, rtol, atol, steps);
      const double base_s = std::chrono::duration<double>(Clock::now() - start).count();
      std::printf("%-12s %-15s %7.0e %10.4f %8ld %10.2f %12.2e %10s\n", p.name.c_str(), "odeint-rkf78", rtol,
                  base_s, steps, 1e6 * base_s / steps, max_error(base, ref), "1.0");
      for (RiccatiSolver s : {RiccatiSolver::RiccatiOde, RiccatiSolver::Hamiltonian}) {
        RiccatiOptions o;
        o.solver = s;
        o.propagation.rtol = rtol;
        o.propagation.atol = atol;
        o.dense_intervals = samples - 1;  // the dense grid is the sample grid
        start = Clock::now();
        std::string label = s == RiccatiSolver::RiccatiOde ? "ode" : "hamiltonian";
        try {
          RiccatiSolution sol = solve_riccati(*p.sys, p.w, times, o);
          if (s == RiccatiSolver::RiccatiOde) label = "ode " + sol.stats.engine;  // the scheme the probe chose
          const double sec = std::chrono::duration<double>(Clock::now() - start).count();
          std::vector<Eigen::MatrixXd> at;
          for (std::size_t k = 0; k < times.size(); ++k) at.push_back(sol.P[sol.output_index[k]]);
          std::printf("%-12s %-15s %7.0e %10.4f %8ld %10.2f %12.2e %10.1f\n", p.name.c_str(), label.c_str(), rtol, sec,
                      sol.stats.steps, 1e6 * sec / std::max(1L, sol.stats.steps), max_error(at, ref), base_s / sec);
        } catch (const std::exception& e) {
          std::printf("%-12s %-15s %7.0e failed: %s\n", p.name.c_str(), label.c_str(), rtol, e.what());
        }
      }
    }
    std::fflush(stdout);
  }
  return 0;
}
