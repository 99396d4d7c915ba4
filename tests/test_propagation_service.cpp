// The engine's integration services: the symmetric matrix equation service (forward Riccati of
// a Kalman-Bucy filter, backward Lyapunov), the state simulator (feedback, running cost, sampled
// input), failures that stop at once, callbacks never entered concurrently by default, and the
// direct response path reaching the exact path's tolerance on an unstable plant.
#include <gtest/gtest.h>

#include <atomic>
#include <cmath>
#include <sstream>

#include "gramian/gramian.hpp"
#include "io/errors.hpp"
#include "model/function_system.hpp"
#include "model/model_file.hpp"
#include "propagation/state_simulator.hpp"
#include "propagation/symmetric_matrix_ode.hpp"
#include "response/respond.hpp"
#include "support.hpp"

using namespace ordex;

namespace {

const std::string kData = std::string(ORDEX_TESTS_DIR) + "/data/";

// Scalar Riccati equation of a Kalman-Bucy filter (forward in time):
//   p' = 2 a p + q - (c^2 / r) p^2,  p(0) = p0.
// Derivation of the closed form (standard for the Riccati equation with constant
// coefficients): with s = c^2 / r the right-hand side is -s (p - p1)(p - p2), where p1, p2 are the
// roots of s p^2 - 2 a p - q = 0, p1,2 = (a +- beta) / s, beta = sqrt(a^2 + s q). Then
// z = (p - p1) / (p - p2) obeys z' = p' (p1 - p2) / (p - p2)^2 = -s (p1 - p2) z = -2 beta z, so
// z(t) = z0 exp(-2 beta t) and p(t) = (p1 - p2 z(t)) / (1 - z(t)).
double scalar_riccati(double a, double q, double c, double r, double p0, double t) {
  const double s = c * c / r, beta = std::sqrt(a * a + s * q);
  const double p1 = (a + beta) / s, p2 = (a - beta) / s;
  const double z = (p0 - p1) / (p0 - p2) * std::exp(-2.0 * beta * t);
  return (p1 - p2 * z) / (1.0 - z);
}

SymmetricMatrixOde scalar_filter_equation(double a, double q, double c, double r) {
  SymmetricMatrixOde eq;
  eq.n = 1;
  eq.F = [a](double, MatrixRef F) { F(0, 0) = a; };                 // F = A
  eq.S = [q](double, MatrixRef S) { S(0, 0) = q; };                 // S = G Qn G'
  eq.quadratic_rank = 1;
  eq.G = [c](double, MatrixRef G) { G(0, 0) = c; };                 // G = C'
  eq.W = [r](double, MatrixRef W) { W(0, 0) = 1.0 / r; };           // W = Rn^-1
  eq.label = "Kalman-Bucy covariance";
  eq.symbol = "P";
  return eq;
}

}  // namespace

TEST(SymmetricOdeService, ForwardRiccatiOfAFilterMatchesClosedForm) {
  const double a = 0.3, q = 2.0, c = 1.5, r = 0.5, p0 = 0.1;
  for (OdeScheme scheme : {OdeScheme::Adams, OdeScheme::Bdf}) {
    OdeOptions o;
    o.scheme = scheme;
    o.rtol = 1e-11;
    o.atol = 1e-13;
    SymmetricMatrixOdeSolver solver(scalar_filter_equation(a, q, c, r), o);
    solver.start(0.0, Eigen::MatrixXd::Constant(1, 1, p0));
    Eigen::MatrixXd P;
    for (double t : {0.1, 0.5, 1.0, 3.0, 8.0}) {
      solver.advance(t, P);
      const double ref = scalar_riccati(a, q, c, r, p0, t);
      EXPECT_NEAR(P(0, 0), ref, 1e-9 * std::abs(ref)) << "t = " << t;
    }
    EXPECT_GT(solver.stats().steps, 0);
  }
}

TEST(SymmetricOdeService, MatrixFilterDecouplesIntoScalarClosedForms) {
  // Two independent channels with a dense R: the service's packed unknowns must keep the
  // off-diagonal entry at zero and each diagonal entry on its scalar closed form.
  const double a[2] = {0.3, -1.2}, q[2] = {2.0, 0.5}, c[2] = {1.5, 0.8}, r[2] = {0.5, 0.2};
  SymmetricMatrixOde eq;
  eq.n = 2;
  eq.F = [&](double, MatrixRef F) { F << a[0], 0, 0, a[1]; };
  eq.S = [&](double, MatrixRef S) { S << q[0], 0, 0, q[1]; };
  eq.quadratic_rank = 2;
  eq.G = [&](double, MatrixRef G) { G << c[0], 0, 0, c[1]; };
  eq.W = [&](double, MatrixRef W) { W << 1 / r[0], 0, 0, 1 / r[1]; };
  OdeOptions o;
  o.rtol = 1e-11;
  o.atol = 1e-13;
  Eigen::MatrixXd P0(2, 2);
  P0 << 0.1, 0, 0, 3.0;
  SymmetricOdeStats st;
  Eigen::MatrixXd P = solve_symmetric_ode(eq, o, 0.0, P0, 2.5, &st);
  EXPECT_NEAR(P(0, 0), scalar_riccati(a[0], q[0], c[0], r[0], 0.1, 2.5), 1e-9);
  EXPECT_NEAR(P(1, 1), scalar_riccati(a[1], q[1], c[1], r[1], 3.0, 2.5), 1e-9);
  EXPECT_NEAR(P(0, 1), 0.0, 1e-12);
  EXPECT_GT(st.steps, 0);
}

TEST(SymmetricOdeService, BackwardLyapunovMatchesClosedForm) {
  // dW/dt = 2 a W - b^2 backward from W(T) = 0 gives W(t) = b^2 (1 - exp(-2a(T - t))) / (2a),
  // the controllability Gramian of x' = a x + b u over [t, T] (direct integration of
  // int_t^T exp(2a(t - s)) b^2 ds).
  const double a = -0.7, b = 1.3, T = 4.0;
  SymmetricMatrixOde eq;
  eq.n = 1;
  eq.F = [a](double, MatrixRef F) { F(0, 0) = a; };
  eq.S = [b](double, MatrixRef S) { S(0, 0) = -b * b; };
  for (OdeScheme scheme : {OdeScheme::Adams, OdeScheme::Bdf}) {
    OdeOptions o;
    o.scheme = scheme;
    o.rtol = 1e-11;
    o.atol = 1e-14;
    const Eigen::MatrixXd W = solve_symmetric_ode(eq, o, T, Eigen::MatrixXd::Zero(1, 1), 0.5);
    const double ref = b * b * (1 - std::exp(-2 * a * (T - 0.5))) / (2 * a);
    EXPECT_NEAR(W(0, 0), ref, 1e-9 * std::abs(ref));
  }
}

TEST(StateSimulator, FeedbackAndRunningCostMatchClosedForm) {
  // x' = a x + b u, u = -k x: x(t) = x0 exp((a - b k) t) and the cost int (x^2 + u^2) dt =
  // x0^2 (1 + k^2) (exp(2 (a - b k) t) - 1) / (2 (a - b k)) (direct integration).
  const double a = 0.5, b = 2.0, k = 1.5, x0 = 0.8, T = 3.0, s = a - b * k;
  StateSimulation sim;
  sim.plant.states = 1;
  sim.plant.inputs = 1;
  sim.plant.A = [a](double, MatrixRef A) { A(0, 0) = a; };
  sim.plant.B = [b](double, MatrixRef B) { B(0, 0) = b; };
  sim.input.gain = [k](double, MatrixRef K) { K(0, 0) = k; };
  sim.running_cost = [](double, const Eigen::VectorXd& x, const Eigen::VectorXd& u) { return x.squaredNorm() + u.squaredNorm(); };
  for (OdeScheme scheme : {OdeScheme::Adams, OdeScheme::Bdf}) {
    OdeOptions o;
    o.scheme = scheme;
    o.rtol = 1e-11;
    o.atol = 1e-14;
    SimulationResult r = simulate_states(sim, 0.0, Eigen::VectorXd::Constant(1, x0), {0.0, 1.0, T}, o);
    EXPECT_NEAR(r.states(1, 0), x0 * std::exp(s), 1e-9);
    EXPECT_NEAR(r.states(2, 0), x0 * std::exp(s * T), 1e-9);
    EXPECT_NEAR(r.inputs(2, 0), -k * x0 * std::exp(s * T), 1e-9);
    EXPECT_NEAR(r.cost(2), x0 * x0 * (1 + k * k) * (std::exp(2 * s * T) - 1) / (2 * s), 1e-9);
  }
}

TEST(StateSimulator, HeldInputJumpsAtItsSamples) {
  // x' = u with u held at 1 on [0, 1) and 3 on [1, 2): x(2) = 4 exactly, x(1.5) = 2.5.
  StateSimulation sim;
  sim.plant.states = 1;
  sim.plant.inputs = 1;
  sim.plant.A = [](double, MatrixRef A) { A.setZero(); };
  sim.plant.B = [](double, MatrixRef B) { B(0, 0) = 1; };
  sim.input.samples.times = {0.0, 1.0, 2.0};
  sim.input.samples.values = Eigen::Vector3d(1.0, 3.0, 5.0);
  sim.input.samples.interpolation = SampleInterpolation::ZeroOrderHold;
  SimulationResult r = simulate_states(sim, 0.0, Eigen::VectorXd::Zero(1), {1.5, 2.0}, OdeOptions{});
  EXPECT_NEAR(r.states(0, 0), 2.5, 1e-9);
  EXPECT_NEAR(r.states(1, 0), 4.0, 1e-9);
}

TEST(IntegrationFailure, ThrowingModelStopsAtOnce) {
  // The model fails for t > 0.5: the integration must stop at the first failing call, and the
  // exception reaches the caller unchanged.
  long failing_calls = 0;
  StateSimulation sim;
  sim.plant.states = 1;
  sim.plant.A = [&](double t, MatrixRef A) {
    if (t > 0.5) {
      ++failing_calls;
      throw NumericalError("A[0][0] cannot be evaluated at t = " + format_number(t));
    }
    A(0, 0) = -1;
  };
  for (OdeScheme scheme : {OdeScheme::Adams, OdeScheme::Bdf}) {
    failing_calls = 0;
    OdeOptions o;
    o.scheme = scheme;
    try {
      simulate_states(sim, 0.0, Eigen::VectorXd::Ones(1), {2.0}, o);
      ADD_FAILURE() << "no failure";
    } catch (const NumericalError& e) {
      EXPECT_NE(std::string(e.what()).find("A[0][0] cannot be evaluated at t = "), std::string::npos) << e.what();
    }
    EXPECT_EQ(failing_calls, 1) << "scheme " << int(scheme);
  }
}

TEST(IntegrationFailure, BlowUpStopsAtOnceNamingStateAndTime) {
  // x' = 900 x + u (tests/data/response_blowup.toml) overflows near t = 0.79: the direct path
  // must fail there after a bounded number of evaluations, naming the state and t.
  std::unique_ptr<System> sys = load_model(kData + "response_blowup.toml");
  long calls = 0;
  FunctionSystem counted({"x"});
  counted.set_A([&](double, MatrixRef A) {
    ++calls;
    A(0, 0) = 900.0;
  });
  counted.set_B({"u"}, [](double, MatrixRef B) { B(0, 0) = 1.0; });
  for (const System* s : std::vector<const System*>{sys.get(), &counted}) {
    InputHistory h = make_input_history({0.0, 5.0, 10.0}, Eigen::MatrixXd::Ones(3, 1));
    RespondOptions o;
    o.path = ResponsePath::Direct;
    o.x0 = Eigen::VectorXd::Ones(1);
    calls = 0;
    try {
      respond(*s, {h}, o);
      ADD_FAILURE() << "no failure";
    } catch (const NumericalError& e) {
      const std::string m = e.what();
      EXPECT_NE(m.find("derivative of x is not finite at t = 0.7"), std::string::npos) << m;
    }
  }
  // About a thousand steps reach the overflow; a failing right-hand side that CVODE retried
  // would cost millions of calls (as it did before it stopped at once).
  EXPECT_GT(calls, 10);
  EXPECT_LT(calls, 20000);
}

TEST(Threads, FunctionSystemCallbacksAreNeverEnteredConcurrently) {
  // The Gramian sweep runs two threads by default; a FunctionSystem's callbacks share what they
  // capture, so they must be entered by one thread at a time unless the user allows more.
  std::atomic<int> inside{0}, most{0};
  std::atomic<long> calls{0};
  auto enter = [&] {
    const int now = ++inside;
    int seen = most.load();
    while (now > seen && !most.compare_exchange_weak(seen, now)) {}
    ++calls;
  };
  FunctionSystem sys({"x", "v"});
  sys.set_A([&](double t, MatrixRef a) {
    enter();
    // Long enough for another thread to arrive while this one is inside.
    double s = 0;
    for (int i = 0; i < 2000; ++i) s += std::sin(t + i);
    a << 0, 1, -1 - 0.1 * std::cos(t) + 0 * s, -0.05;
    --inside;
  });
  sys.set_B({"f"}, [&](double, MatrixRef b) {
    enter();
    b << 0, 1;
    --inside;
  });
  EXPECT_FALSE(sys.clones_may_run_concurrently());
  GramianOptions o;  // default: two threads
  ASSERT_GE(o.threads, 2);
  std::vector<double> grid;
  for (int k = 0; k <= 40; ++k) grid.push_back(0.25 * k);
  GramianResult g = compute_gramian(sys, 0.0, 10.0, o, grid);
  EXPECT_TRUE(g.gramian.allFinite());
  EXPECT_GT(calls.load(), 100);
  EXPECT_EQ(most.load(), 1);
  // Expression models are free to run on clones concurrently.
  EXPECT_TRUE(load_model(kData + "response_unstable.toml")->clones_may_run_concurrently());
  sys.set_concurrent_callbacks(true);
  EXPECT_TRUE(sys.clones_may_run_concurrently());
}

namespace {

InputHistory unstable_input() {
  std::vector<double> t;
  Eigen::MatrixXd u(41, 1);
  for (int k = 0; k <= 40; ++k) {
    t.push_back(0.25 * k);
    u(k, 0) = std::sin(0.7 * t.back()) + 0.3 * std::cos(2.1 * t.back());
  }
  return make_input_history(t, u, "unstable_push");
}

std::string write_history(const std::string& name, const InputHistory& h) {
  std::ostringstream s;
  s.precision(17);
  s << "t,push\n";
  for (std::size_t k = 0; k < h.times.size(); ++k) s << h.times[k] << "," << h.values(static_cast<Eigen::Index>(k), 0) << "\n";
  const std::string path = ordex_test::temp_dir() + "/" + name;
  ordex_test::write_file(path, s.str());
  return path;
}

Eigen::MatrixXd parse_rows(const std::string& text) {
  std::vector<std::vector<double>> rows;
  std::istringstream in(text);
  std::string line;
  while (std::getline(in, line)) {
    if (line.empty()) continue;
    std::vector<double> row;
    std::istringstream ls(line);
    std::string cell;
    while (std::getline(ls, cell, ',')) row.push_back(std::stod(cell));
    rows.push_back(row);
  }
  Eigen::MatrixXd m(static_cast<Eigen::Index>(rows.size()), rows.empty() ? 0 : static_cast<Eigen::Index>(rows[0].size()));
  for (std::size_t i = 0; i < rows.size(); ++i)
    for (std::size_t j = 0; j < rows[i].size(); ++j) m(static_cast<Eigen::Index>(i), static_cast<Eigen::Index>(j)) = rows[i][j];
  return m;
}

}  // namespace

TEST(DirectPath, ReachesTheExactPathsToleranceOnAnUnstablePlant) {
  std::unique_ptr<System> sys = load_model(kData + "response_unstable.toml");
  const InputHistory h = unstable_input();
  const std::string in = write_history("service_unstable.csv", h);
  // Outside reference: scipy.integrate.solve_ivp (DOP853, rtol 1e-13), interval by interval.
  for (Hold hold : {Hold::Linear, Hold::Zoh}) {
    auto ref = ordex_test::run_python("propagation_service_unstable.py", in + " " + hold_name(hold) + " 0.2,-0.1");
    ASSERT_EQ(ref.exit_code, 0) << ref.err;
    const Eigen::MatrixXd r = parse_rows(ref.out);
    ASSERT_EQ(r.rows(), 41);
    RespondOptions o;  // default tolerances: rtol 1e-8, atol 1e-10
    o.hold = hold;
    o.x0 = Eigen::Vector2d(0.2, -0.1);
    const RespondReport exact = respond(*sys, {h}, o);
    const Eigen::MatrixXd& xr = r.rightCols(2);
    const double scale = xr.cwiseAbs().maxCoeff();
    ASSERT_GT(scale, 1e3);  // the plant really is unstable over the window
    for (OdeScheme scheme : {OdeScheme::Adams, OdeScheme::Bdf}) {
      o.path = ResponsePath::Direct;
      o.direct_scheme = scheme;
      const RespondReport direct = respond(*sys, {h}, o);
      const Eigen::MatrixXd& xd = direct.runs[0].states;
      ASSERT_EQ(xd.rows(), 41);
      // Within the stated tolerance of the reference and of the exact path, row by row
      // (relative to the size of the state at that time).
      for (Eigen::Index k = 0; k < 41; ++k) {
        const double size = xr.row(k).cwiseAbs().maxCoeff();
        const double allowed = 1e-8 * size + 1e-10;
        EXPECT_LT((xd.row(k) - xr.row(k)).cwiseAbs().maxCoeff(), allowed)
            << hold_name(hold) << " scheme " << int(scheme) << " row " << k;
        EXPECT_LT((xd.row(k) - exact.runs[0].states.row(k)).cwiseAbs().maxCoeff(), 2 * allowed)
            << hold_name(hold) << " scheme " << int(scheme) << " row " << k;
      }
      EXPECT_TRUE(direct.direct_accuracy.target_met);
      EXPECT_LE(direct.direct_accuracy.error_ratio, 1.0);
      EXPECT_GE(direct.direct_accuracy.runs, 2);
    }
  }
}
