// Benchmarks of the transition-matrix engine: Phi(t1, t0) by each ordex method against the code a
// C++ user would otherwise write - Boost.Odeint's controlled runge_kutta_fehlberg78 on the n^2
// unknowns of vec(Phi), with an Eigen product in the right-hand side - compared at matched
// achieved accuracy rather than at equal tolerance settings (tolerances mean different things to
// different integrators; what a user cares about is the error obtained for the time spent).
//
// Problems:
//   orbit    models/orbit_relative_motion.toml over one revolution of the target (n = 6),
//   mathieu  models/mathieu.toml with a = 2, q = 5 over 50 periods (n = 2; a lies in the stable
//            band a_1(5) = 1.858 < a < b_2(5) = 2.099 of the Mathieu chart, values from
//            scipy.special.mathieu_a / mathieu_b), so Phi stays bounded and every entry matters,
//   random   A(t) = A0 + sin(w1 t) A1 + cos(w2 t) A2 with fixed-seed random entries scaled by
//            1/sqrt(n) (spectral radius of order one for every n), n = 24, 48, 96,
//   eccentric  the orbit model at eccentricity 0.3 and 0.6 (--set ecc), one revolution,
//   bank     ten coupled, pumped oscillators of 3 to 30 rad/s (n = 20),
//   chain    a lightly damped, pumped chain of 20 masses (n = 40).
// Every engine run is one long run (use_period = false), as the baseline's must be.
//
// Accuracy: each run's Phi is compared with a reference Phi_ref (magnus6 at rtol 1e-14), itself
// checked against magnus6 at rtol 1e-13 and against the independent Odeint RKF78 run at rtol
// 1e-14; on Mathieu's window of 50 periods the reference is M^50 with M the one-period matrix.
// The error is  max_ij |S^-1 (Phi - Phi_ref) S|_ij / max_ij |S^-1 Phi_ref S|_ij  with S the
// diagonal of state units (identity, except the orbit's velocities, measured in km times the mean
// motion, so that every block of its Phi is dimensionless and counts).
//
// Matched accuracy: for each method the tolerance grid (rtol 1e-6 down to 1e-14 in half decades,
// atol = atol_ratio * rtol) is scanned from loose to tight; the first run with error <= 1e-10 is
// the matched one, and only that one is timed (repeat until >= 0.3 s, best of 3). At n = 96 each
// method runs once more at the tolerance matched at n = 48, which gives the cost ratio
// t(96)/t(48) at equal tolerance (n^3 work predicts 8). Beside the wall time (steady clock) the
// thread's CPU time is kept, which a busy shared machine disturbs much less.
//
// Where the time goes: the parts of a magnus6 step (an evaluation of A, an n x n product, the
// exponential of h A) are timed alone, and a cost model of the matched magnus6 run built from them
// is checked against its measured time. The exponential is also timed after diagonal balancing,
// to measure what balancing would save.
#include <Eigen/Dense>
#include <array>
#include <boost/numeric/odeint.hpp>
#include <chrono>
#include <cmath>
#include <cstdint>
#include <ctime>
#include <cstdio>
#include <iostream>
#include <limits>
#include <map>
#include <memory>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include "common/front_end.hpp"
#include "io/errors.hpp"
#include "io/json.hpp"
#include "model/function_system.hpp"
#include "model/model_file.hpp"
#include "propagation/expm.hpp"
#include "propagation/propagator.hpp"

namespace {

using Eigen::MatrixXd;
using Eigen::VectorXd;
using ordex::InputError;
using ordex::Json;
using ordex::System;

const char* const kApp = "ordex_bench_propagation";
const double kPi = 3.14159265358979323846;
/// Where the tables go: standard output, or standard error when --json - takes standard output.
FILE* g_out = stdout;
int g_threads = 1;  // --threads, for every engine run

// ---------------------------------------------------------------------------------------------
// Options and report

const std::string kProblemNames = "orbit,eccentric,mathieu,random,bank,chain";

struct Options {
  /// --quick: a small smoke run (short Mathieu window, n = 12 and 24, four tolerances, short
  /// timing). Default false: the full run of docs/performance.md.
  bool quick = false;
  /// --problems: comma-separated subset of orbit, eccentric (the orbit model at e = 0.3 and
  /// 0.6), mathieu, random, bank, chain; default all.
  std::string problems = "orbit,eccentric,mathieu,random,bank,chain";
  /// --methods: comma-separated subset of magnus4, magnus6, adams, bdf, rkf78 (for profiling one
  /// method); the baseline rkf78 always runs, since speed-ups are measured against it. Default all.
  std::string methods = "magnus4,magnus6,adams,bdf,rk8,rkf78";
  /// --target: the achieved relative error that counts as matched accuracy; default 1e-10.
  double target = 1e-10;
  /// --min-time: each timing repeats a run until this many seconds have passed; default 0.3
  /// (0.02 with --quick).
  double min_time = 0.3;
  /// --repeats: timings per measurement, of which the best is kept; default 3 (1 with --quick).
  int repeats = 3;
  /// --json: write every run (including the tolerance scans) to PATH; default none.
  std::string json;
  /// --threads: PropagationOptions::threads of the engine's runs (pieces of the window on that
  /// many threads); default 1. The baseline always runs on one thread. With more than one,
  /// read the wall times: the CPU column counts the calling thread only.
  int threads = 1;

  void validate() const {
    if (!(target > 0 && target < 1)) throw InputError("--target: must lie in (0, 1)");
    if (!(min_time > 0 && min_time <= 60)) throw InputError("--min-time: must lie in (0, 60] seconds");
    if (repeats < 1 || repeats > 100) throw InputError("--repeats: must lie in [1, 100]");
    if (threads < 1 || threads > 64) throw InputError("--threads: must lie in [1, 64]");
    std::stringstream in(problems);
    std::string p;
    int count = 0;
    while (std::getline(in, p, ',')) {
      if (!listed(kProblemNames, p))
        throw InputError("--problems: unknown problem '" + p + "' (choose from " + kProblemNames + ")");
      ++count;
    }
    if (count == 0) throw InputError("--problems: empty list");
    std::stringstream ms(methods);
    while (std::getline(ms, p, ','))
      if (p != "auto" && p != "magnus4" && p != "magnus6" && p != "adams" && p != "bdf" && p != "rk8" && p != "rkf78")
        throw InputError("--methods: unknown method '" + p + "' (choose magnus4, magnus6, adams, bdf, rk8, rkf78)");
  }
  bool wants(const std::string& p) const { return listed(problems, p); }
  bool runs(const std::string& m) const { return m == "rkf78" || listed(methods, m); }
  static bool listed(const std::string& list, const std::string& item) {
    return ("," + list + ",").find("," + item + ",") != std::string::npos;
  }
};

/// One propagation: what it cost and how accurate it was.
struct Run {
  std::string method;
  double rtol = 0, atol = 0;
  double error = 0;       ///< achieved relative error against the reference
  long steps = 0;         ///< accepted steps
  long evaluations = 0;   ///< evaluations of A(t)
  double seconds = -1;    ///< best-of-N wall time of one run (steady clock); -1 when not timed
  double cpu_seconds = -1;  ///< best-of-N CPU time of the thread for one run (robust to a busy machine)
  bool matched = false;   ///< error <= target
};

/// What one problem produced.
struct ProblemReport {
  std::string name, description;
  int n = 0;
  double t0 = 0, t1 = 0;
  double reference_rtol = 1e-14;
  double reference_check_magnus6 = 0;  ///< |ref - magnus6 @ 1e-13| (relative, as the error)
  double reference_check_rkf78 = 0;    ///< |ref - Odeint RKF78 @ 1e-14| (independent method)
  double reference_direct = -1;        ///< periodic windows: |ref - one magnus6 run @ 1e-14|
  std::vector<Run> scan;               ///< every untimed run of the tolerance scans
  std::vector<Run> selected;           ///< the timed run of each method
};

// ---------------------------------------------------------------------------------------------
// Problems

struct Problem {
  std::string name, description;
  std::unique_ptr<System> system;
  double t0 = 0, t1 = 0;
  VectorXd scale;            ///< state units for the error measure
  double atol_ratio = 1e-3;  ///< atol = atol_ratio * rtol
  /// When > 0 the window is this many periods of a periodic A(t), and the reference is the
  /// power M^periods of the one-period monodromy matrix M (Floquet: Phi(t0 + kT, t0) = M^k),
  /// which carries far less accumulated roundoff than one long integration.
  int periods = 0;
  double period = 0;
};

Problem orbit_problem() {
  Problem p;
  p.name = "orbit";
  p.system = ordex::load_model(ORDEX_MODELS_DIR "/orbit_relative_motion.toml");
  const auto& w = p.system->info().window;
  if (!w) throw InputError("orbit_relative_motion.toml: the model has no [window]");
  p.t0 = w->first;
  p.t1 = w->second;
  const double mean_motion = 2 * kPi / (p.t1 - p.t0);  // the window is one revolution
  p.scale = VectorXd::Ones(6);
  p.scale.tail(3).setConstant(mean_motion);
  // Velocity-per-position entries are of order the mean motion (7e-4 /s) and smaller; atol must
  // stay below rtol times them for the tolerance to act relatively on every block.
  p.atol_ratio = 1e-5;
  p.description = "relative motion about an eccentric orbit, one revolution";
  return p;
}

/// The orbit model at another eccentricity of the target's orbit, over one revolution.
Problem eccentric_orbit_problem(double ecc) {
  Problem p = orbit_problem();
  p.system = ordex::load_model(ORDEX_MODELS_DIR "/orbit_relative_motion.toml", {{"ecc", ecc}});
  char name[32];
  std::snprintf(name, sizeof name, "orbit-e%.1f", ecc);
  p.name = name;
  p.description = "relative motion about an orbit of eccentricity " + std::string(name + 7) + ", one revolution";
  return p;
}

/// x'' = -(K0 + sin(w t) K1) x - C x' as a first-order A(t) = [[0, I], [-K(t), -C]] over
/// [0, 10]; velocities measured in units of VELOCITY_SCALE (per state) for the error.
Problem second_order_problem(const std::string& name, const std::string& description, const MatrixXd& k0,
                             const MatrixXd& k1, double w, const MatrixXd& c, const VectorXd& velocity_scale) {
  const Eigen::Index m = k0.rows();
  std::vector<std::string> names;
  for (Eigen::Index i = 0; i < m; ++i) names.push_back("q" + std::to_string(i + 1));
  for (Eigen::Index i = 0; i < m; ++i) names.push_back("v" + std::to_string(i + 1));
  auto sys = std::make_unique<ordex::FunctionSystem>(names, name);
  sys->set_concurrent_callbacks(true);  // the callback holds its own copies: --threads may fork it
  sys->set_A([k0, k1, w, c, m](double t, ordex::MatrixRef out) {
    out.setZero();
    out.topRightCorner(m, m).setIdentity();
    out.bottomLeftCorner(m, m) = -(k0 + std::sin(w * t) * k1);
    out.bottomRightCorner(m, m) = -c;
  });
  Problem p;
  p.name = name;
  p.description = description;
  p.system = std::move(sys);
  p.t0 = 0;
  p.t1 = 10;
  p.scale = VectorXd::Ones(2 * m);
  p.scale.tail(m) = velocity_scale;
  return p;
}

/// Ten oscillators with natural frequencies 3 to 30 rad/s (3 k rad/s), 1 % damping, each
/// coupled by a weak spring to the next, stiffnesses pumped by 10 % at 0.7 rad/s; t in [0, 10].
Problem bank_problem() {
  const int m = 10;
  MatrixXd k0 = MatrixXd::Zero(m, m), c = MatrixXd::Zero(m, m);
  for (int i = 0; i < m; ++i) {
    const double w = 3.0 * (i + 1);
    k0(i, i) = w * w;
    c(i, i) = 2 * 0.01 * w;
  }
  for (int i = 0; i + 1 < m; ++i) {  // coupling springs of stiffness 2 (rad/s)^2
    k0(i, i) += 2;
    k0(i + 1, i + 1) += 2;
    k0(i, i + 1) -= 2;
    k0(i + 1, i) -= 2;
  }
  // Velocities in units of each oscillator's frequency.
  return second_order_problem("bank", "ten coupled oscillators, 3 to 30 rad/s, pumped 10 %, t in [0, 10]", k0,
                              0.1 * k0, 0.7, c, VectorXd::LinSpaced(m, 3.0, 3.0 * m));
}

/// A lightly damped chain of 20 unit masses between two walls (n = 40), springs of stiffness
/// 100 (frequencies up to about 20 rad/s) pumped by 20 % at 0.3 rad/s, damping 0.5 % of
/// critical for the stiffest mode; t in [0, 10].
Problem chain_problem() {
  const int m = 20;
  MatrixXd k0 = MatrixXd::Zero(m, m);
  for (int i = 0; i < m; ++i) {
    k0(i, i) = 200;
    if (i + 1 < m) k0(i, i + 1) = k0(i + 1, i) = -100;
  }
  MatrixXd c = 0.005 * 2 * 20 * MatrixXd::Identity(m, m);
  // Velocities in units of a typical frequency, 10 rad/s.
  return second_order_problem("chain40", "20-mass lightly damped spring chain (n = 40), pumped 20 %, t in [0, 10]",
                              k0, 0.2 * k0, 0.3, c, VectorXd::Constant(m, 10.0));
}

Problem mathieu_problem(double periods) {
  Problem p;
  p.name = "mathieu";
  p.system = ordex::load_model(ORDEX_MODELS_DIR "/mathieu.toml", {{"a", 2.0}, {"q", 5.0}});
  p.t0 = 0;
  p.t1 = periods * kPi;
  p.periods = static_cast<int>(periods);
  p.period = kPi;  // the coefficient a - 2 q cos 2t has period pi
  p.scale = VectorXd::Ones(2);
  p.atol_ratio = 1e-3;
  std::ostringstream d;
  d << "Mathieu a = 2, q = 5 (stable), " << periods << " periods";
  p.description = d.str();
  return p;
}

/// Uniform numbers in [-1, 1) from the raw 64-bit Mersenne twister output (fully specified by
/// the C++ standard, so the matrices are the same with every standard library).
class Uniform {
 public:
  explicit Uniform(std::uint64_t seed) : gen_(seed) {}
  double operator()() { return static_cast<double>(gen_() >> 11) * 0x1.0p-52 - 1.0; }

 private:
  std::mt19937_64 gen_;
};

Problem random_problem(int n) {
  // Entries of variance 1/n (uniform on [-sqrt(3/n), sqrt(3/n)]) give spectral radius near one
  // for every n (the circular law), so step sizes do not change with n and the cost ratio
  // between sizes measures the work per step alone.
  Uniform u(20261201u + static_cast<std::uint64_t>(n));
  const double s = std::sqrt(3.0 / n);
  auto mats = std::make_shared<std::array<MatrixXd, 3>>();
  for (int k = 0; k < 3; ++k) {
    MatrixXd m(n, n);
    for (Eigen::Index i = 0; i < m.size(); ++i) m(i) = s * u();
    (*mats)[k] = (k == 0 ? 1.0 : 0.5) * m;
  }
  const double w1 = 1.7, w2 = 2.3;
  std::vector<std::string> names;
  for (int i = 0; i < n; ++i) names.push_back("x" + std::to_string(i + 1));
  auto sys = std::make_unique<ordex::FunctionSystem>(names, "smooth random A(t)");
  sys->set_concurrent_callbacks(true);  // the matrices are only read: --threads may fork it
  sys->set_A([mats, w1, w2](double t, ordex::MatrixRef out) {
    out = (*mats)[0] + std::sin(w1 * t) * (*mats)[1] + std::cos(w2 * t) * (*mats)[2];
  });
  Problem p;
  p.name = "random" + std::to_string(n);
  p.system = std::move(sys);
  p.t0 = 0;
  p.t1 = 5;
  p.scale = VectorXd::Ones(n);
  p.atol_ratio = 1e-3;
  p.description = "A0 + sin(1.7 t) A1 + cos(2.3 t) A2, n = " + std::to_string(n) + ", t in [0, 5]";
  return p;
}

// ---------------------------------------------------------------------------------------------
// The runs

struct Result {
  MatrixXd phi;
  long steps = 0, evaluations = 0;
};

const std::vector<std::string> kMethods = {"auto", "magnus4", "magnus6", "adams", "bdf", "rk8", "rkf78"};
const char* const kBaseline = "rkf78";

/// The baseline: Boost.Odeint, controlled RKF78 on vec(Phi), the rhs one Eigen product.
Result odeint_transition(const System& sys, double t0, double t1, double rtol, double atol) {
  namespace ode = boost::numeric::odeint;
  using State = std::vector<double>;
  const int n = sys.states();
  MatrixXd a(n, n);
  long evaluations = 0;
  auto rhs = [&sys, &a, &evaluations, n](const State& x, State& dxdt, double t) {
    sys.A(t, a);
    ++evaluations;
    Eigen::Map<const MatrixXd> X(x.data(), n, n);
    Eigen::Map<MatrixXd> D(dxdt.data(), n, n);
    D.noalias() = a * X;
  };
  State x(static_cast<std::size_t>(n) * n, 0.0);
  for (int i = 0; i < n; ++i) x[static_cast<std::size_t>(i) * n + i] = 1.0;
  auto stepper = ode::make_controlled(atol, rtol, ode::runge_kutta_fehlberg78<State>());
  Result r;
  try {
    r.steps = static_cast<long>(ode::integrate_adaptive(stepper, rhs, x, t0, t1, 1e-3 * (t1 - t0)));
  } catch (const std::exception& e) {
    throw ordex::NumericalError(std::string("odeint rkf78 failed: ") + e.what());
  }
  r.evaluations = evaluations;
  r.phi = Eigen::Map<MatrixXd>(x.data(), n, n);
  return r;
}

Result engine_transition(const System& sys, const std::string& method, double t0, double t1,
                         double rtol, double atol) {
  ordex::PropagationOptions o;
  o.method = ordex::parse_method(method);
  o.rtol = rtol;
  o.atol = atol;
  o.use_period = false;  // one long run, as the baseline must do (no Floquet shortcut)
  o.threads = g_threads;
  ordex::Propagator prop(ordex::state_generator(sys, t0, t1), o);  // as the apps build it (auto probes the window)
  Result r;
  r.phi = prop.transition(t0, t1);
  r.steps = prop.stats().steps;
  r.evaluations = prop.stats().evaluations;
  return r;
}

Result transition(const Problem& p, const std::string& method, double rtol, double t0, double t1) {
  const double atol = p.atol_ratio * rtol;
  if (method == kBaseline) return odeint_transition(*p.system, t0, t1, rtol, atol);
  return engine_transition(*p.system, method, t0, t1, rtol, atol);
}

Result transition(const Problem& p, const std::string& method, double rtol) {
  return transition(p, method, rtol, p.t0, p.t1);
}

/// The reference-quality Phi over the window: one integration, or for a window of whole
/// periods the power of the one-period matrix.
MatrixXd reference_transition(const Problem& p, const std::string& method, double rtol) {
  if (p.periods <= 0) return transition(p, method, rtol).phi;
  MatrixXd m = transition(p, method, rtol, p.t0, p.t0 + p.period).phi;
  MatrixXd power = MatrixXd::Identity(m.rows(), m.cols());
  for (int k = 0; k < p.periods; ++k) power = m * power;
  return power;
}

double relative_error(const MatrixXd& phi, const MatrixXd& ref, const VectorXd& scale) {
  // S^-1 M S has entries M_ij s_j / s_i.
  MatrixXd w = scale.cwiseInverse().asDiagonal() * (phi - ref) * scale.asDiagonal();
  MatrixXd r = scale.cwiseInverse().asDiagonal() * ref * scale.asDiagonal();
  if (!phi.allFinite()) return std::numeric_limits<double>::infinity();
  return w.cwiseAbs().maxCoeff() / r.cwiseAbs().maxCoeff();
}

double thread_cpu_seconds() {
  timespec ts{};
  clock_gettime(CLOCK_THREAD_CPUTIME_ID, &ts);
  return static_cast<double>(ts.tv_sec) + 1e-9 * static_cast<double>(ts.tv_nsec);
}

/// Best of REPEATS timings, each the mean over as many runs as fill MIN_TIME seconds of wall
/// time; the thread's CPU time over the same runs is kept beside it.
void time_runs(const Problem& p, Run& run, const Options& o) {
  using Clock = std::chrono::steady_clock;
  double best = std::numeric_limits<double>::infinity(), best_cpu = best;
  for (int r = 0; r < o.repeats; ++r) {
    long count = 0;
    auto start = Clock::now();
    double cpu_start = thread_cpu_seconds();
    double elapsed = 0;
    do {
      (void)transition(p, run.method, run.rtol);
      ++count;
      elapsed = std::chrono::duration<double>(Clock::now() - start).count();
    } while (elapsed < o.min_time);
    best = std::min(best, elapsed / count);
    best_cpu = std::min(best_cpu, (thread_cpu_seconds() - cpu_start) / count);
  }
  run.seconds = best;
  run.cpu_seconds = best_cpu;
}

Run measure(const Problem& p, const std::string& method, double rtol, const MatrixXd& ref,
            const Options& o) {
  Result res = transition(p, method, rtol);
  Run run;
  run.method = method;
  run.rtol = rtol;
  run.atol = p.atol_ratio * rtol;
  run.error = relative_error(res.phi, ref, p.scale);
  run.steps = res.steps;
  run.evaluations = res.evaluations;
  run.matched = run.error <= o.target;
  return run;
}

std::vector<double> tolerance_grid(bool quick) {
  if (quick) return {1e-7, 1e-9, 1e-11, 1e-13};
  std::vector<double> g;
  for (int e = 6; e <= 14; ++e) {
    g.push_back(std::pow(10.0, -e));
    if (e < 14) g.push_back(std::sqrt(10.0) * std::pow(10.0, -e - 1));  // the half decade below
  }
  return g;
}

ProblemReport reference_and_report(const Problem& p, MatrixXd& ref) {
  ProblemReport rep;
  rep.name = p.name;
  rep.description = p.description;
  rep.n = p.system->states();
  rep.t0 = p.t0;
  rep.t1 = p.t1;
  ref = reference_transition(p, "magnus6", rep.reference_rtol);
  // Two independent checks of the reference: the same method one tolerance looser, and a
  // different integrator at a tight tolerance. Both must agree far below the target.
  rep.reference_check_magnus6 = relative_error(reference_transition(p, "magnus6", 1e-13), ref, p.scale);
  rep.reference_check_rkf78 = relative_error(reference_transition(p, kBaseline, 1e-14), ref, p.scale);
  if (p.periods > 0)  // how far one long integration at the tightest tolerance lands from it
    rep.reference_direct = relative_error(transition(p, "magnus6", rep.reference_rtol).phi, ref, p.scale);
  return rep;
}

void check_reference(const ProblemReport& rep, const Options& o) {
  // The independent method at the same tightest tolerance bounds the reference's error; the
  // looser magnus6 run shows that the tolerance has converged (it measures the looser run).
  double worst = rep.reference_check_rkf78;
  std::fprintf(stderr, "%s: %s: reference checks %.2e (magnus6 1e-13), %.2e (rkf78 1e-14)\n", kApp,
               rep.name.c_str(), rep.reference_check_magnus6, rep.reference_check_rkf78);
  if (rep.reference_direct >= 0)
    std::fprintf(stderr, "%s: %s: reference = M^k of the one-period matrix; one direct magnus6 run "
                 "at rtol 1e-14 differs by %.2e\n", kApp, rep.name.c_str(), rep.reference_direct);
  if (worst > 0.1 * o.target)
    std::fprintf(stderr, "%s: warning: %s: the reference is not 10x more accurate than the target\n",
                 kApp, rep.name.c_str());
}

/// Scans the tolerance grid of every method and times the matched run.
ProblemReport run_search(const Problem& p, const Options& o) {
  MatrixXd ref;
  ProblemReport rep = reference_and_report(p, ref);
  check_reference(rep, o);
  for (const std::string& m : kMethods) {
    if (!o.runs(m)) continue;
    Run chosen;
    bool found = false;
    for (double rtol : tolerance_grid(o.quick)) {
      // The reference run itself would match trivially (a periodic window's reference is a
      // matrix power, not a run, so there the direct run at that tolerance is a fair entry).
      if (m == "magnus6" && rtol <= rep.reference_rtol && p.periods == 0) break;
      Run run = measure(p, m, rtol, ref, o);
      rep.scan.push_back(run);
      chosen = run;
      if (run.matched) {
        found = true;
        break;
      }
    }
    time_runs(p, chosen, o);
    std::fprintf(stderr, "%s: %s %-7s rtol %.1e error %.2e %s %.3e s\n", kApp, p.name.c_str(),
                 m.c_str(), chosen.rtol, chosen.error, found ? "matched" : "NOT matched",
                 chosen.seconds);
    rep.selected.push_back(chosen);
  }
  return rep;
}

/// Runs every method once at a given tolerance each (the ones matched at the smaller size).
ProblemReport run_fixed(const Problem& p, const std::map<std::string, double>& rtols, const Options& o) {
  MatrixXd ref;
  ProblemReport rep = reference_and_report(p, ref);
  check_reference(rep, o);
  for (const std::string& m : kMethods) {
    if (!o.runs(m)) continue;
    Run run = measure(p, m, rtols.at(m), ref, o);
    time_runs(p, run, o);
    std::fprintf(stderr, "%s: %s %-7s rtol %.1e error %.2e %.3e s\n", kApp, p.name.c_str(), m.c_str(),
                 run.rtol, run.error, run.seconds);
    rep.selected.push_back(run);
  }
  return rep;
}

// ---------------------------------------------------------------------------------------------
// Where the time goes: the parts of a Magnus step timed alone, and a cost model built from them
// and the counts of the matched run, checked against the measured time of that run.

/// Seconds per call of F: repeated until MIN_TIME / 4 has passed, best of REPEATS.
template <class F>
double per_call(F&& f, const Options& o) {
  using Clock = std::chrono::steady_clock;
  double best = std::numeric_limits<double>::infinity();
  for (int r = 0; r < o.repeats; ++r) {
    long count = 0;
    auto start = Clock::now();
    double elapsed = 0;
    do {
      for (int k = 0; k < 16; ++k) f();
      count += 16;
      elapsed = std::chrono::duration<double>(Clock::now() - start).count();
    } while (elapsed < 0.25 * o.min_time);
    best = std::min(best, elapsed / count);
  }
  return best;
}

/// Diagonal balancing by powers of two (the classical Parlett-Reinsch iteration, without
/// permutations): returns d with B = D^-1 M D having row and column norms of similar size, so
/// that exp(M) = D exp(B) D^-1 exactly (powers of two scale without rounding).
VectorXd balance(MatrixXd& b) {
  const Eigen::Index n = b.rows();
  VectorXd d = VectorXd::Ones(n);
  for (int sweep = 0; sweep < 32; ++sweep) {
    bool changed = false;
    for (Eigen::Index i = 0; i < n; ++i) {
      double c = b.col(i).cwiseAbs().sum() - std::abs(b(i, i));
      double r = b.row(i).cwiseAbs().sum() - std::abs(b(i, i));
      if (c == 0 || r == 0) continue;
      double f = std::exp2(std::round(0.5 * std::log2(r / c)));
      if (f != 1 && c * f + r / f < 0.95 * (c + r)) {
        b.col(i) *= f;
        b.row(i) /= f;
        d(i) *= f;
        changed = true;
      }
    }
    if (!changed) break;
  }
  return d;
}

struct Breakdown {
  std::string problem;
  int n = 0;
  double step = 0;            ///< mean accepted magnus6 step h of the matched run
  double omega_norm1 = 0;     ///< 1-norm of h A(t) at an interior time
  double omega_balanced_norm1 = 0;
  double eval = 0, product = 0, expm_full = 0, expm_half = 0, expm_balanced = 0;  ///< s per call
  double balanced_difference = 0;  ///< |D exp(B) D^-1 - exp(h A)| relative, as the error measure
  long attempts = 0;               ///< accepted + rejected magnus6 steps
  double model = 0, measured = 0;  ///< predicted and measured seconds of the magnus6 run
  double share_eval = 0, share_expm = 0, share_product = 0;
  double rkf78_model = 0, rkf78_measured = 0;
};

Breakdown cost_breakdown(const Problem& p, const Run& m6, const Run& base, const Options& o) {
  Breakdown b;
  b.problem = p.name;
  b.n = p.system->states();
  const int n = b.n;
  const double span = p.t1 - p.t0;
  MatrixXd a(n, n), x = MatrixXd::Random(n, n), y = MatrixXd::Random(n, n), z(n, n);
  double t = p.t0;
  b.eval = per_call([&] { p.system->A(t, a); t += 1e-3 * span; if (t > p.t1) t = p.t0; }, o);
  b.product = per_call([&] { z.noalias() = x * y; x(0, 0) += 1e-300 * z(0, 0); }, o);

  b.step = span / static_cast<double>(m6.steps);
  p.system->A(p.t0 + 0.37 * span, a);
  MatrixXd omega = b.step * a, half = 0.5 * omega, e(n, n), e2(n, n);
  ordex::MatrixExponential expm;
  b.expm_full = per_call([&] { expm.compute(omega, e); }, o);
  b.expm_half = per_call([&] { expm.compute(half, e); }, o);
  b.omega_norm1 = omega.cwiseAbs().colwise().sum().maxCoeff();
  MatrixXd bal = omega;
  VectorXd d = balance(bal);
  b.omega_balanced_norm1 = bal.cwiseAbs().colwise().sum().maxCoeff();
  b.expm_balanced = per_call([&] { expm.compute(bal, e2); }, o);
  expm.compute(omega, e);
  expm.compute(bal, e2);
  MatrixXd back = d.asDiagonal() * e2 * d.cwiseInverse().asDiagonal();
  b.balanced_difference = relative_error(back, e, p.scale);

  // The step-doubling Magnus step of magnus.cpp: per attempt 9 evaluations, one exponential of
  // the full step and two of the half steps, 3 x 6 commutator products and 4 more products
  // (the pair of halves, Phi, its error, the carried error).
  b.attempts = (m6.evaluations - 1) / 9;
  const double t_eval = 9 * b.eval, t_expm = b.expm_full + 2 * b.expm_half, t_prod = 22 * b.product;
  b.model = b.attempts * (t_eval + t_expm + t_prod);
  b.measured = m6.seconds;
  b.share_eval = b.attempts * t_eval / b.model;
  b.share_expm = b.attempts * t_expm / b.model;
  b.share_product = b.attempts * t_prod / b.model;
  // RKF78: every stage one evaluation and one product; the rest is Odeint's vector arithmetic.
  b.rkf78_model = base.evaluations * (b.eval + b.product);
  b.rkf78_measured = base.seconds;
  return b;
}

void print_breakdowns(const std::vector<Breakdown>& list) {
  std::fprintf(g_out, "\nWhere magnus6 spends its time (parts timed alone, seconds per call):\n");
  std::fprintf(g_out, "%-10s %4s %9s %9s %9s %9s %9s %9s %9s %6s %6s %6s %7s %7s\n", "problem", "n", "h",
              "|hA|_1", "eval", "product", "expm(h)", "expm(h/2)", "expm(bal)", "eval%", "expm%",
              "prod%", "model/", "rkf78/");
  std::fprintf(g_out, "%-10s %4s %9s %9s %9s %9s %9s %9s %9s %6s %6s %6s %7s %7s\n", "", "", "", "", "", "", "",
              "", "", "", "", "", "meas.", "meas.");
  for (const Breakdown& b : list)
    std::fprintf(g_out, "%-10s %4d %9.3g %9.3g %9.2e %9.2e %9.2e %9.2e %9.2e %6.1f %6.1f %6.1f %7.2f %7.2f\n",
                b.problem.c_str(), b.n, b.step, b.omega_norm1, b.eval, b.product, b.expm_full,
                b.expm_half, b.expm_balanced, 100 * b.share_eval, 100 * b.share_expm,
                100 * b.share_product, b.model / b.measured, b.rkf78_model / b.rkf78_measured);
  std::fprintf(g_out, "(expm(bal): the same exponential after diagonal balancing, |B|_1 and agreement in "
              "the JSON; model/meas.: cost model over measured time)\n");
}

Json breakdown_json(const Breakdown& b) {
  return Json{{"problem", b.problem}, {"n", b.n}, {"magnus6_step", b.step},
              {"omega_norm1", b.omega_norm1}, {"omega_balanced_norm1", b.omega_balanced_norm1},
              {"seconds_per_evaluation", b.eval}, {"seconds_per_product", b.product},
              {"seconds_per_expm_full_step", b.expm_full}, {"seconds_per_expm_half_step", b.expm_half},
              {"seconds_per_expm_balanced", b.expm_balanced},
              {"balanced_expm_difference", b.balanced_difference},
              {"magnus6_attempts", b.attempts}, {"magnus6_model_seconds", b.model},
              {"magnus6_measured_seconds", b.measured}, {"share_evaluations", b.share_eval},
              {"share_exponentials", b.share_expm}, {"share_products", b.share_product},
              {"rkf78_eval_and_product_seconds", b.rkf78_model}, {"rkf78_measured_seconds", b.rkf78_measured}};
}

// ---------------------------------------------------------------------------------------------
// Output

const Run& find(const ProblemReport& r, const std::string& method) {
  for (const Run& run : r.selected)
    if (run.method == method) return run;
  throw std::logic_error("no run of " + method);
}

/// Fastest ordex method that reached the target (null when none did).
const Run* best_engine_run(const ProblemReport& r) {
  const Run* best = nullptr;
  for (const Run& run : r.selected)
    if (run.method != kBaseline && run.matched && (!best || run.seconds < best->seconds)) best = &run;
  return best;
}

void print_table(const std::vector<ProblemReport>& reports) {
  std::fprintf(g_out, "\n%-10s %-8s %8s %9s %8s %9s %11s %11s %9s\n", "problem", "method", "rtol", "error",
              "steps", "evals", "seconds", "cpu s", "speed-up");
  for (const ProblemReport& r : reports) {
    const Run& base = find(r, kBaseline);
    for (const Run& run : r.selected) {
      std::fprintf(g_out, "%-10s %-8s %8.1e %9.2e%s %8ld %9ld %11.4e %11.4e %8.2fx\n", r.name.c_str(),
                  run.method.c_str(), run.rtol, run.error, run.matched ? " " : "*", run.steps,
                  run.evaluations, run.seconds, run.cpu_seconds, base.seconds / run.seconds);
    }
  }
  std::fprintf(g_out, "(* = error above the target; seconds = wall time, cpu s = thread CPU time, best of\n"
              " the repeats; speed-up = baseline seconds / method seconds)\n");
}

Json run_json(const Run& r) {
  return Json{{"method", r.method}, {"rtol", r.rtol}, {"atol", r.atol},
              {"error", ordex::number_to_json(r.error)}, {"matched", r.matched},
              {"steps", r.steps}, {"evaluations", r.evaluations},
              {"seconds", r.seconds < 0 ? Json(nullptr) : Json(r.seconds)},
              {"cpu_seconds", r.cpu_seconds < 0 ? Json(nullptr) : Json(r.cpu_seconds)}};
}

/// Prints the targets of the issue and whether each is met; returns the JSON of the verdicts.
Json print_targets(const std::vector<ProblemReport>& reports, const std::string& small,
                   const std::string& large, double target) {
  Json out = Json::array();
  std::fprintf(g_out, "\nTargets (matched accuracy %.0e):\n", target);
  for (auto [name, goal] : {std::pair<std::string, double>{"mathieu", 3.0}, {"orbit", 1.5}}) {
    for (const ProblemReport& r : reports) {
      if (r.name != name) continue;
      const Run& base = find(r, kBaseline);
      const Run* best = best_engine_run(r);
      double speedup = best && base.matched ? base.seconds / best->seconds : 0.0;
      double speedup_cpu = best && base.matched ? base.cpu_seconds / best->cpu_seconds : 0.0;
      bool met = best && base.matched && speedup >= goal;
      std::fprintf(g_out, "  %-8s best ordex method %-8s %6.2fx faster than rkf78 (CPU time %.2fx; goal >= %.1fx): %s\n",
                  name.c_str(), best ? best->method.c_str() : "none", speedup, speedup_cpu, goal,
                  met ? "met" : "NOT met");
      out.push_back(Json{{"target", name + " speed-up >= " + std::to_string(goal).substr(0, 3)},
                         {"best_method", best ? best->method : ""}, {"value", speedup},
                         {"value_cpu", speedup_cpu}, {"met", met}});
    }
  }
  const ProblemReport *rs = nullptr, *rl = nullptr;
  for (const ProblemReport& r : reports) {
    if (r.name == small) rs = &r;
    if (r.name == large) rl = &r;
  }
  if (rs && rl) {
    std::fprintf(g_out, "  cost ratio t(%s)/t(%s) at equal tolerance (goal <= 12):\n", large.c_str(), small.c_str());
    for (const Run& a : rs->selected) {
      const std::string& m = a.method;
      const Run& b = find(*rl, m);
      double ratio = b.seconds / a.seconds, ratio_cpu = b.cpu_seconds / a.cpu_seconds;
      bool met = ratio <= 12.0;
      std::fprintf(g_out, "    %-8s rtol %.1e  %.4e s -> %.4e s  ratio %5.2f (CPU %5.2f)  steps %ld -> %ld: %s\n",
                  m.c_str(), a.rtol, a.seconds, b.seconds, ratio, ratio_cpu, a.steps, b.steps,
                  m == kBaseline ? (met ? "(baseline) <= 12" : "(baseline) > 12") : (met ? "met" : "NOT met"));
      out.push_back(Json{{"target", "t(" + large + ")/t(" + small + ") <= 12"}, {"method", m},
                         {"value", ratio}, {"value_cpu", ratio_cpu}, {"met", met}});
    }
  }
  return out;
}

int run(int argc, char** argv) {
  Options o;
  namespace po = boost::program_options;
  po::options_description desc("Options");
  desc.add_options()
      ("quick", po::bool_switch(&o.quick), "a small smoke run (seconds) instead of the full one (a few minutes)")
      ("problems", po::value(&o.problems)->value_name("LIST")->default_value(o.problems),
       "comma-separated subset of orbit, eccentric, mathieu, random, bank, chain")
      ("methods", po::value(&o.methods)->value_name("LIST")->default_value(o.methods),
       "comma-separated subset of magnus4, magnus6, adams, bdf, rk8, rkf78 (rkf78 always runs)")
      ("threads", po::value(&o.threads)->value_name("N")->default_value(o.threads),
       "threads of each engine run (the window in N pieces); the baseline uses one")
      ("target", po::value(&o.target)->value_name("E")->default_value(o.target),
       "achieved relative error that counts as matched accuracy")
      ("min-time", po::value(&o.min_time)->value_name("S"),
       "seconds each timing repeats a run for (default 0.3; 0.02 with --quick)")
      ("repeats", po::value(&o.repeats)->value_name("N"),
       "timings per measurement, the best kept (default 3; 1 with --quick)")
      ("json", po::value(&o.json)->value_name("PATH"),
       "write every run, the scans included, as JSON ('-' = standard output)")
      ("help", "print this help")
      ("version", "print the version");
  po::variables_map vm;
  if (!ordex::parse_command_line(
          argc, argv, desc, vm, kApp, std::string(kApp) + " [--quick] [options]",
          "Times Phi(t1, t0) by magnus4, magnus6, adams and bdf against Boost.Odeint's\n"
          "runge_kutta_fehlberg78 on vec(Phi), each at the loosest tolerance whose achieved\n"
          "relative error against a tight reference is within --target. Problems: the orbit\n"
          "model over one revolution, Mathieu (a = 2, q = 5) over 50 periods, smooth random A(t)\n"
          "with n = 24, 48, 96 (n = 96 at the tolerances matched at n = 48). Table on standard\n"
          "output, progress on standard error."))
    return 0;
  if (o.quick) {
    if (!vm.count("min-time")) o.min_time = 0.02;
    if (!vm.count("repeats")) o.repeats = 1;
  }
  o.validate();
  g_threads = o.threads;
  if (o.json == "-") g_out = stderr;

  std::vector<ProblemReport> reports;
  std::vector<Breakdown> breakdowns;
  auto record = [&](const Problem& p, ProblemReport r) {
    bool has_m6 = false;
    for (const Run& run : r.selected) has_m6 = has_m6 || run.method == "magnus6";
    if (has_m6) breakdowns.push_back(cost_breakdown(p, find(r, "magnus6"), find(r, kBaseline), o));
    reports.push_back(std::move(r));
  };
  if (o.wants("orbit")) {
    Problem p = orbit_problem();
    record(p, run_search(p, o));
  }
  if (o.wants("eccentric")) {
    for (double ecc : {0.3, 0.6}) {
      Problem p = eccentric_orbit_problem(ecc);
      record(p, run_search(p, o));
    }
  }
  if (o.wants("bank")) {
    Problem p = bank_problem();
    record(p, run_search(p, o));
  }
  if (o.wants("chain")) {
    Problem p = chain_problem();
    record(p, run_search(p, o));
  }
  if (o.wants("mathieu")) {
    Problem p = mathieu_problem(o.quick ? 5 : 50);
    record(p, run_search(p, o));
  }
  const int n_small = o.quick ? 12 : 48, n_large = o.quick ? 24 : 96;
  if (o.wants("random")) {
    if (!o.quick) {
      Problem p = random_problem(24);
      record(p, run_search(p, o));
    }
    Problem ps = random_problem(n_small);
    record(ps, run_search(ps, o));
    std::map<std::string, double> rtols;
    for (const Run& r : reports.back().selected) rtols[r.method] = r.rtol;
    Problem pl = random_problem(n_large);
    record(pl, run_fixed(pl, rtols, o));
  }
  print_table(reports);
  print_breakdowns(breakdowns);
  Json verdicts = print_targets(reports, "random" + std::to_string(n_small),
                                "random" + std::to_string(n_large), o.target);

  if (!o.json.empty()) {
    Json j;
    j["app"] = kApp;
    j["quick"] = o.quick;
    j["target"] = o.target;
    j["min_time"] = o.min_time;
    j["repeats"] = o.repeats;
    j["problems"] = Json::array();
    for (const ProblemReport& r : reports) {
      Json pj{{"name", r.name}, {"description", r.description}, {"n", r.n}, {"t0", r.t0}, {"t1", r.t1},
              {"reference", {{"method", "magnus6"}, {"rtol", r.reference_rtol},
                             {"check_magnus6_1e-13", r.reference_check_magnus6},
                             {"check_rkf78_1e-14", r.reference_check_rkf78},
                             {"periodic_power", r.reference_direct >= 0},
                             {"direct_magnus6_1e-14", r.reference_direct >= 0 ? Json(r.reference_direct) : Json(nullptr)}}}};
      pj["selected"] = Json::array();
      for (const Run& run : r.selected) pj["selected"].push_back(run_json(run));
      pj["scan"] = Json::array();
      for (const Run& run : r.scan) pj["scan"].push_back(run_json(run));
      j["problems"].push_back(pj);
    }
    j["targets"] = verdicts;
    j["breakdown"] = Json::array();
    for (const Breakdown& b : breakdowns) j["breakdown"].push_back(breakdown_json(b));
    ordex::write_json_file(o.json, j);
  }
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  return ordex::run_app(kApp, [&] { return run(argc, argv); });
}
