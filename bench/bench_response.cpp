// Benchmarks of the response module (docs/performance.md has the figures):
//  1. 100 input histories of 10,000 samples through the orbit scenario: the batch exact path
//     (step matrices computed once for the shared grid) against the direct CVODE path and a
//     Boost.Odeint runge_kutta_fehlberg78 baseline at the same tolerances; accuracy of each
//     against a tight reference (exact path at rtol 1e-12).
//  2. A constant n = 48 model on 10,000 samples: ordex-respond against scipy.signal.lsim, both
//     as whole processes reading the same files and writing the same CSV.
// Usage: ordex_bench_response [BIN_DIR] [HISTORIES]   (BIN_DIR holds ordex-respond)
#include <boost/numeric/odeint.hpp>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <random>
#include <sstream>

#include "model/model_file.hpp"
#include "response/respond.hpp"

using namespace ordex;

namespace {

double now() {
  return std::chrono::duration<double>(std::chrono::steady_clock::now().time_since_epoch()).count();
}

// Thrust-like acceleration histories (km/s^2): a few slow sinusoids and some on/off pulses.
std::vector<InputHistory> orbit_histories(int count, int samples, double t0, double t1) {
  std::mt19937 rng(20261201);
  std::uniform_real_distribution<double> U(-1.0, 1.0);
  std::vector<double> t(samples);
  for (int k = 0; k < samples; ++k) t[k] = t0 + (t1 - t0) * k / (samples - 1);
  t.back() = t1;
  std::vector<InputHistory> out;
  for (int h = 0; h < count; ++h) {
    Eigen::MatrixXd u(samples, 3);
    double amp[3][3], w[3][3], ph[3][3], pulse_on[3], pulse_len[3];
    for (int i = 0; i < 3; ++i) {
      for (int j = 0; j < 3; ++j) {
        amp[i][j] = 1e-6 * U(rng);
        w[i][j] = (j + 1) * 2 * M_PI / (t1 - t0) * (1 + 0.3 * U(rng));
        ph[i][j] = M_PI * U(rng);
      }
      pulse_on[i] = t0 + (t1 - t0) * (0.5 + 0.4 * U(rng));
      pulse_len[i] = (t1 - t0) * 0.02 * (1.5 + U(rng));
    }
    for (int k = 0; k < samples; ++k)
      for (int i = 0; i < 3; ++i) {
        double v = 0;
        for (int j = 0; j < 3; ++j) v += amp[i][j] * std::sin(w[i][j] * (t[k] - t0) + ph[i][j]);
        if (t[k] >= pulse_on[i] && t[k] < pulse_on[i] + pulse_len[i]) v += 2e-6;
        u(k, i) = v;
      }
    out.push_back(make_input_history(t, u, "history " + std::to_string(h + 1)));
  }
  return out;
}

// Boost.Odeint baseline: runge_kutta_fehlberg78, controlled, restarted on every sample
// interval with the linearly interpolated input (the same problem as the direct path).
// FIRST_STEPS: the first trial step is the interval over FIRST_STEPS (1: the whole interval).
Eigen::MatrixXd odeint_states(const System& sys, const InputHistory& h, double rtol, double atol, long& steps,
                              int first_steps = 1) {
  namespace odeint = boost::numeric::odeint;
  using State = std::vector<double>;
  const int n = sys.states(), m = sys.inputs();
  Eigen::MatrixXd A(n, n), B(n, m);
  Eigen::VectorXd ua(m), ub(m);
  double a = 0, b = 1;
  auto rhs = [&](const State& x, State& dx, double t) {
    sys.A(t, A);
    sys.B(t, B);
    const double f = (t - a) / (b - a);
    Eigen::Map<Eigen::VectorXd>(dx.data(), n) =
        A * Eigen::Map<const Eigen::VectorXd>(x.data(), n) + B * ((1 - f) * ua + f * ub);
  };
  auto stepper = odeint::make_controlled(atol, rtol, odeint::runge_kutta_fehlberg78<State>());
  Eigen::MatrixXd X(static_cast<Eigen::Index>(h.samples()), n);
  State x(n, 0.0);
  X.row(0).setZero();
  for (std::size_t k = 0; k + 1 < h.samples(); ++k) {
    a = h.times[k];
    b = h.times[k + 1];
    ua = h.values.row(k).transpose();
    ub = h.values.row(k + 1).transpose();
    steps += static_cast<long>(odeint::integrate_adaptive(stepper, rhs, x, a, b, (b - a) / first_steps));
    X.row(static_cast<Eigen::Index>(k + 1)) = Eigen::Map<Eigen::VectorXd>(x.data(), n).transpose();
  }
  return X;
}

double worst_error(const std::vector<Eigen::MatrixXd>& got, const std::vector<Eigen::MatrixXd>& ref) {
  double e = 0;
  for (std::size_t i = 0; i < got.size(); ++i) e = std::max(e, (got[i] - ref[i]).cwiseAbs().maxCoeff());
  return e;
}

void orbit_benchmark(int count) {
  std::unique_ptr<System> sys = load_model(std::string(ORDEX_MODELS_DIR) + "/orbit_relative_motion.toml");
  const double t0 = sys->info().window->first, t1 = sys->info().window->second;
  const int samples = 10000;
  std::vector<InputHistory> hs = orbit_histories(count, samples, t0, t1);
  std::printf("orbit scenario: %d histories x %d samples over one period (%.1f s), hold linear, rtol 1e-8 atol 1e-10\n",
              count, samples, t1 - t0);
  RespondOptions o;  // the defaults: rtol 1e-8, atol 1e-10 (km)
  o.hold = Hold::Linear;

  double s = now();
  RespondReport exact = respond(*sys, hs, o);
  const double t_exact = now() - s;

  // The reference comes from another method (Boost.Odeint rkf78) at tight tolerances, so
  // the exact path is not judged against itself; its first trial step is an eighth of the
  // interval, so it does not merely repeat the baseline's steps.
  s = now();
  long ref_steps = 0;
  std::vector<Eigen::MatrixXd> ref;
  for (const InputHistory& h : hs) ref.push_back(odeint_states(*sys, h, 1e-13, 1e-15, ref_steps, 8));
  const double t_ref = now() - s;
  RespondOptions r = o;
  r.propagation.rtol = 1e-12;
  r.propagation.atol = 1e-14;
  RespondReport exact_tight = respond(*sys, hs, r);

  o.path = ResponsePath::Direct;
  s = now();
  RespondReport direct = respond(*sys, hs, o);
  const double t_direct = now() - s;

  s = now();
  long odeint_steps = 0;
  std::vector<Eigen::MatrixXd> ode;
  for (const InputHistory& h : hs) ode.push_back(odeint_states(*sys, h, 1e-8, 1e-10, odeint_steps));
  const double t_odeint = now() - s;

  std::vector<Eigen::MatrixXd> ex, di, et;
  for (auto& run : exact.runs) ex.push_back(run.states);
  for (auto& run : direct.runs) di.push_back(run.states);
  for (auto& run : exact_tight.runs) et.push_back(run.states);
  double scale = 0;
  for (auto& x : ref) scale = std::max(scale, x.cwiseAbs().maxCoeff());
  std::printf("%-34s %10s %12s %14s\n", "method", "seconds", "speed-up", "max |x err| km");
  std::printf("%-34s %10.3f %12s %14.3e\n", "exact batch (shared step matrices)", t_exact, "1.0", worst_error(ex, ref));
  std::printf("%-34s %10.3f %11.1fx %14.3e\n", "direct CVODE Adams", t_direct, t_direct / t_exact, worst_error(di, ref));
  std::printf("%-34s %10.3f %11.1fx %14.3e\n", "Boost.Odeint rkf78 (controlled)", t_odeint, t_odeint / t_exact, worst_error(ode, ref));
  std::printf("%-34s %10s %12s %14.3e\n", "exact batch at rtol 1e-12", "", "", worst_error(et, ref));
  std::printf("reference: Boost.Odeint rkf78 at rtol 1e-13, atol 1e-15, first step h/8 (%.3f s, %ld steps); largest |x| %.3e km\n",
              t_ref, ref_steps, scale);
  std::printf("exact: %ld interval steps integrated (%zu grid), %ld engine steps; direct: %ld CVODE steps; odeint: %ld steps\n",
              exact.computed_steps, exact.grids, exact.propagation.steps, direct.direct.steps, odeint_steps);
  std::printf("target: exact batch >= 10x faster than direct: %s (%.1fx)\n\n",
              t_direct / t_exact >= 10 ? "met" : "NOT met", t_direct / t_exact);
}

double run_timed(const std::string& cmd, int repeats) {
  double best = 1e300;
  for (int i = 0; i < repeats; ++i) {
    double s = now();
    if (std::system(cmd.c_str()) != 0) {
      std::fprintf(stderr, "failed: %s\n", cmd.c_str());
      std::exit(1);
    }
    best = std::min(best, now() - s);
  }
  return best;
}

Eigen::MatrixXd load_csv(const std::string& path) {
  std::ifstream in(path);
  std::string line;
  std::getline(in, line);
  std::vector<std::vector<double>> rows;
  while (std::getline(in, line)) {
    std::vector<double> r;
    std::stringstream ls(line);
    std::string f;
    while (std::getline(ls, f, ',')) r.push_back(std::stod(f));
    rows.push_back(r);
  }
  Eigen::MatrixXd m(rows.size(), rows[0].size());
  for (std::size_t i = 0; i < rows.size(); ++i)
    for (std::size_t j = 0; j < rows[i].size(); ++j) m(i, j) = rows[i][j];
  return m;
}

void constant_benchmark(const std::string& bin) {
  const int n = 48, m = 4, p = 3, samples = 10000;
  const std::string dir = "/tmp/ordex_bench_response";
  std::system(("mkdir -p " + dir).c_str());
  std::mt19937 rng(48);
  std::normal_distribution<double> N(0.0, 1.0);
  // A stable coupled system: -0.3 I plus a random part of spectral radius about 1.
  Eigen::MatrixXd A(n, n), B(n, m), C(p, n);
  for (int i = 0; i < n; ++i)
    for (int j = 0; j < n; ++j) A(i, j) = N(rng) / std::sqrt(n) - (i == j ? 1.3 : 0.0);
  for (auto* M : {&B, &C})
    for (Eigen::Index i = 0; i < M->size(); ++i) M->data()[i] = N(rng);
  std::ofstream toml(dir + "/constant48.toml");
  toml.precision(17);
  toml << "[system]\ntitle = \"Random stable 48-state plant (benchmark)\"\nstates = [";
  for (int i = 0; i < n; ++i) toml << (i ? ", " : "") << "\"s" << i + 1 << "\"";
  toml << "]\ninputs = [";
  for (int i = 0; i < m; ++i) toml << (i ? ", " : "") << "\"i" << i + 1 << "\"";
  toml << "]\noutputs = [";
  for (int i = 0; i < p; ++i) toml << (i ? ", " : "") << "\"o" << i + 1 << "\"";
  toml << "]\n\n[matrices]\n";
  auto write = [&](const char* name, const Eigen::MatrixXd& M) {
    toml << name << " = [";
    for (Eigen::Index i = 0; i < M.rows(); ++i) {
      toml << (i ? ",\n  [" : "[");
      for (Eigen::Index j = 0; j < M.cols(); ++j) toml << (j ? ", " : "") << M(i, j);
      toml << "]";
    }
    toml << "]\n";
  };
  write("A", A);
  write("B", B);
  write("C", C);
  toml.close();
  std::ofstream in(dir + "/input48.csv");
  in.precision(17);
  in << "t,i1,i2,i3,i4\n";
  for (int k = 0; k < samples; ++k) {
    double t = 0.01 * k;
    in << t << "," << std::sin(0.7 * t) << "," << (std::fmod(t, 13.0) < 6.5 ? 1.0 : -1.0) << ","
       << std::cos(0.23 * t) * std::sin(1.9 * t) << "," << 0.01 * t << "\n";
  }
  in.close();
  const std::string ours = bin + "/ordex-respond --model " + dir + "/constant48.toml --input " + dir +
                           "/input48.csv --csv " + dir + "/ours.csv >/dev/null";
  const std::string theirs = "/usr/bin/python3 " + std::string(ORDEX_MODELS_DIR) + "/../bench/response_lsim.py " + dir +
                             "/constant48.toml " + dir + "/input48.csv " + dir + "/lsim.csv";
  const double t_ours = run_timed(ours, 5), t_lsim = run_timed(theirs, 5);
  Eigen::MatrixXd a = load_csv(dir + "/ours.csv"), b = load_csv(dir + "/lsim.csv");
  const double diff = (a - b).cwiseAbs().maxCoeff(), scale = b.cwiseAbs().maxCoeff();
  std::printf("constant n = %d, m = %d, p = %d, %d samples (step 0.01), hold linear; whole processes, best of 5\n",
              n, m, p, samples);
  std::printf("%-34s %10s %12s\n", "process", "seconds", "speed-up");
  std::printf("%-34s %10.3f %12s\n", "ordex-respond", t_ours, "1.0");
  std::printf("%-34s %10.3f %11.1fx\n", "python3 + scipy.signal.lsim", t_lsim, t_lsim / t_ours);
  std::printf("largest difference of the two CSVs: %.3e (largest |value| %.3e)\n", diff, scale);
  std::printf("target: ordex-respond >= 5x faster than lsim: %s (%.1fx)\n", t_lsim / t_ours >= 5 ? "met" : "NOT met",
              t_lsim / t_ours);
}

}  // namespace

int main(int argc, char** argv) {
  // The apps are built beside the benchmark (build/bin).
  std::string self = std::filesystem::read_symlink("/proc/self/exe").parent_path().string();
  const std::string bin = argc > 1 ? argv[1] : self;
  const int count = argc > 2 ? std::atoi(argv[2]) : 100;
  try {
    orbit_benchmark(count);
    constant_benchmark(bin);
  } catch (const std::exception& e) {
    std::fprintf(stderr, "bench_response: %s\n", e.what());
    return 1;
  }
  return 0;
}
