// The Riccati solvers against outside references: the scalar closed form, scipy's algebraic
// Riccati solution for a long horizon, scipy's solve_ivp on a time-varying case; the two
// solvers against each other; the closed loop's simulated cost against x0' P(t0) x0.
#include <gtest/gtest.h>

#include <cmath>
#include <nlohmann/json.hpp>

#include "model/time_grid.hpp"
#include "io/errors.hpp"
#include "model/function_system.hpp"
#include "model/model_file.hpp"
#include "riccati/closed_loop.hpp"
#include "propagation/lyapunov_solver.hpp"
#include "riccati/regulator.hpp"
#include "riccati/riccati_solver.hpp"
#include "riccati/weights.hpp"
#include "support.hpp"

using namespace ordex;

namespace {

Eigen::MatrixXd from_json(const nlohmann::json& j) {
  Eigen::MatrixXd m(j.size(), j[0].size());
  for (std::size_t i = 0; i < j.size(); ++i)
    for (std::size_t k = 0; k < j[i].size(); ++k) m(i, k) = j[i][k].get<double>();
  return m;
}

nlohmann::json to_py(const Eigen::MatrixXd& m) {
  nlohmann::json j = nlohmann::json::array();
  for (Eigen::Index i = 0; i < m.rows(); ++i) {
    nlohmann::json row = nlohmann::json::array();
    for (Eigen::Index k = 0; k < m.cols(); ++k) row.push_back(m(i, k));
    j.push_back(row);
  }
  return j;
}

nlohmann::json python(const std::string& script, const std::string& args) {
  auto r = ordex_test::run_python(script, args);
  EXPECT_EQ(r.exit_code, 0) << r.err;
  return nlohmann::json::parse(r.out);
}

double rel_err(const Eigen::MatrixXd& a, const Eigen::MatrixXd& b) {
  return (a - b).cwiseAbs().maxCoeff() / std::max(1e-300, b.cwiseAbs().maxCoeff());
}

RiccatiOptions options_for(RiccatiSolver s, double rtol = 1e-10, double atol = 1e-12) {
  RiccatiOptions o;
  o.solver = s;
  o.propagation.rtol = rtol;
  o.propagation.atol = atol;
  return o;
}

// Scalar Riccati dP/dtau = q + 2 a P - s P^2 (tau = t1 - t, s = b^2/r) from P(0) = p0. With the
// roots P+- = (a +- beta)/s, beta = sqrt(a^2 + s q), u = (P - P+)/(P - P-) obeys u' = -2 beta u,
// so P = (P+ - P- u)/(1 - u), u = u0 exp(-2 beta tau). For p0 = 0 this is
// q tanh(beta tau) / (beta - a tanh(beta tau)). (Derived by separation of variables; the tanh
// form is the textbook scalar LQR solution, from memory.)
double scalar_riccati(double a, double b, double q, double r, double p0, double tau) {
  const double s = b * b / r, beta = std::sqrt(a * a + s * q);
  const double pp = (a + beta) / s, pm = (a - beta) / s;
  const double u = (p0 - pp) / (p0 - pm) * std::exp(-2 * beta * tau);
  return (pp - pm * u) / (1 - u);
}

std::unique_ptr<FunctionSystem> scalar_plant(double a, double b) {
  auto sys = std::make_unique<FunctionSystem>(std::vector<std::string>{"x"});
  sys->set_A([a](double, MatrixRef m) { m(0, 0) = a; });
  sys->set_B({"u"}, [b](double, MatrixRef m) { m(0, 0) = b; });
  return sys;
}

Weights constant_weights(const Eigen::MatrixXd& Q, const Eigen::MatrixXd& R, const Eigen::MatrixXd& Qf,
                         const Eigen::MatrixXd& N) {
  Weights w;
  w.Q = WeightMatrix::constant(Q, "Q");
  w.R = WeightMatrix::constant(R, "R");
  w.Qf = WeightMatrix::constant(Qf, "Qf");
  w.N = WeightMatrix::constant(N, "N");
  w.has_cross = N.cwiseAbs().maxCoeff() > 0;
  w.source = "code";
  return w;
}

}  // namespace

TEST(RiccatiLyapunov, SolvesAgainstKroneckerForm) {
  // F' X + X F = C is (I kron F' + F' kron I) vec X = vec C (column-major vec): solve that dense
  // system directly for a small random F as the reference.
  const int n = 6;
  std::srand(7);
  Eigen::MatrixXd F = Eigen::MatrixXd::Random(n, n) + 0.5 * Eigen::MatrixXd::Identity(n, n);
  Eigen::MatrixXd C = Eigen::MatrixXd::Random(n, n);
  C = (C + C.transpose()).eval();
  SchurLyapunovSolver solver;
  solver.factor(F);  // shift 0 + 1 F
  solver.set_shift(0.0, 1.0);
  Eigen::MatrixXd X;
  solver.solve(C, X);
  // (F' X)_{ab} = sum_c F_{ca} X_{cb}, (X F)_{ab} = sum_d X_{ad} F_{db}; vec index a + n b.
  Eigen::MatrixXd L = Eigen::MatrixXd::Zero(n * n, n * n);
  for (int a = 0; a < n; ++a)
    for (int b = 0; b < n; ++b)
      for (int c = 0; c < n; ++c)
        for (int d = 0; d < n; ++d) L(a + n * b, c + n * d) = (b == d ? F(c, a) : 0.0) + (a == c ? F(d, b) : 0.0);
  Eigen::VectorXd vecC = Eigen::Map<Eigen::VectorXd>(C.data(), n * n);
  Eigen::VectorXd vecX = L.fullPivLu().solve(vecC);
  Eigen::MatrixXd Xref = Eigen::Map<Eigen::MatrixXd>(vecX.data(), n, n);
  EXPECT_LT(rel_err(X, Xref), 1e-12);
  EXPECT_LT((X - X.transpose()).cwiseAbs().maxCoeff(), 1e-12 * X.cwiseAbs().maxCoeff());
  // The shifted form (I/2 + 0.3 F)' X + X (I/2 + 0.3 F) = C from the same factorization.
  solver.set_shift(0.5, 0.3);
  solver.solve(C, X);
  Eigen::MatrixXd G = 0.5 * Eigen::MatrixXd::Identity(n, n) + 0.3 * F;
  EXPECT_LT((G.transpose() * X + X * G - C).cwiseAbs().maxCoeff(), 1e-12 * C.cwiseAbs().maxCoeff());
}

class RiccatiBothSolvers : public ::testing::TestWithParam<RiccatiSolver> {};

TEST_P(RiccatiBothSolvers, ScalarMatchesClosedForm) {
  const double a = 0.7, b = 1.5, q = 2.0, r = 0.5;
  auto sys = scalar_plant(a, b);
  Weights w = constant_weights(Eigen::MatrixXd::Constant(1, 1, q), Eigen::MatrixXd::Constant(1, 1, r),
                               Eigen::MatrixXd::Zero(1, 1), Eigen::MatrixXd::Zero(1, 1));
  const double t1 = 3.0;
  RiccatiSolution sol = solve_riccati(*sys, w, std::vector<double>{0.0, 1.0, 2.0, 2.9, t1}, options_for(GetParam()));
  for (std::size_t k = 0; k < sol.nodes.size(); k += 97) {
    const double tau = t1 - sol.nodes[k];
    const double th = std::tanh(std::sqrt(a * a + b * b * q / r) * tau);
    const double exact = q * th / (std::sqrt(a * a + b * b * q / r) - a * th);  // tanh form
    EXPECT_NEAR(sol.P[k](0, 0), exact, 1e-8 * std::max(1e-3, exact)) << "t = " << sol.nodes[k];
  }
  // Between nodes: the Hermite interpolant used by the controller.
  Eigen::MatrixXd P(1, 1);
  sol.P_at(1.23456, P);
  EXPECT_NEAR(P(0, 0), scalar_riccati(a, b, q, r, 0.0, t1 - 1.23456), 1e-8);
}

TEST_P(RiccatiBothSolvers, BreakpointInPlantMatchesPiecewiseClosedForm) {
  // a jumps from -0.4 to 1.1 at t = 1.5, with Qf = 3: the closed form runs from t1 to 1.5 with
  // a = 1.1 and continues to t0 from P(1.5) with a = -0.4.
  const double a1 = -0.4, a2 = 1.1, b = 0.8, q = 1.5, r = 0.7, qf = 3.0, bp = 1.5, t1 = 4.0;
  auto sys = std::make_unique<FunctionSystem>(std::vector<std::string>{"x"});
  sys->set_A([=](double t, MatrixRef m) { m(0, 0) = t < bp ? a1 : a2; });
  sys->set_B({"u"}, [b](double, MatrixRef m) { m(0, 0) = b; });
  sys->set_breakpoints({bp});
  Weights w = constant_weights(Eigen::MatrixXd::Constant(1, 1, q), Eigen::MatrixXd::Constant(1, 1, r),
                               Eigen::MatrixXd::Constant(1, 1, qf), Eigen::MatrixXd::Zero(1, 1));
  RiccatiOptions o = options_for(GetParam());
  o.dense_intervals = 400;
  RiccatiSolution sol = solve_riccati(*sys, w, linspace(0.0, t1, 41), o);
  const double p_bp = scalar_riccati(a2, b, q, r, qf, t1 - bp);
  const double p_0 = scalar_riccati(a1, b, q, r, p_bp, bp);
  EXPECT_NEAR(sol.P.front()(0, 0), p_0, 1e-8 * p_0);
  Eigen::MatrixXd P(1, 1);
  sol.P_at(bp, P);
  EXPECT_NEAR(P(0, 0), p_bp, 1e-8 * p_bp);
  sol.P_at(0.7, P);  // interpolated on the left piece
  EXPECT_NEAR(P(0, 0), scalar_riccati(a1, b, q, r, p_bp, bp - 0.7), 1e-7 * p_0);
}

TEST_P(RiccatiBothSolvers, LongHorizonTendsToAlgebraicSolution) {
  // An open-loop unstable constant plant with a cross term; over 40 time units P(t0) is the
  // stabilizing solution of the algebraic equation (scipy.linalg.solve_continuous_are).
  Eigen::MatrixXd A(3, 3), B(3, 2), Q(3, 3), R(2, 2), N(3, 2);
  A << 0.1, 1, 0, 0, -0.2, 1, 0.5, -1, 0.3;
  B << 0, 0, 1, 0, 0.5, 1;
  Q = Eigen::Vector3d(1, 2, 0.5).asDiagonal();
  R << 1, 0.2, 0.2, 0.8;
  N << 0.1, 0, 0, 0.1, 0, 0;
  auto sys = std::make_unique<FunctionSystem>(std::vector<std::string>{"a", "b", "c"});
  sys->set_A([A](double, MatrixRef m) { m = A; });
  sys->set_B({"u1", "u2"}, [B](double, MatrixRef m) { m = B; });
  Weights w = constant_weights(Q, R, Eigen::MatrixXd::Zero(3, 3), N);
  RiccatiOptions o = options_for(GetParam());
  o.dense_intervals = 400;
  RiccatiSolution sol = solve_riccati(*sys, w, linspace(0.0, 40.0, 11), o);
  nlohmann::json in = {{"A", to_py(A)}, {"B", to_py(B)}, {"Q", to_py(Q)}, {"R", to_py(R)}, {"N", to_py(N)}};
  nlohmann::json ref = python("riccati_care.py", "'" + in.dump() + "'");
  EXPECT_LT(rel_err(sol.P.front(), from_json(ref["P"])), 1e-8);
  GainEvaluator gains(*sys, w, sol);
  Eigen::MatrixXd K(2, 3);
  gains.K_at(0.0, K);
  EXPECT_LT(rel_err(K, from_json(ref["K"])), 1e-8);
}

TEST_P(RiccatiBothSolvers, TimeVaryingMatchesSolveIvp) {
  auto sys = load_model(std::string(ORDEX_TESTS_DIR) + "/data/riccati_tv.toml");
  Weights w = load_weights(std::string(ORDEX_TESTS_DIR) + "/data/riccati_tv_weights.toml", 2, 1);
  RiccatiSolution sol = solve_riccati(*sys, w, linspace(0.0, 5.0, 5), options_for(GetParam()));
  // scipy.integrate.solve_ivp (DOP853, rtol 1e-12) on the same equation, same formulas.
  nlohmann::json ref = python("riccati_tv_reference.py", "0,1.25,2.5,3.75,5");
  for (std::size_t k = 0; k < 5; ++k) {
    Eigen::MatrixXd Pref = from_json(ref["P"][k]);
    EXPECT_LT(rel_err(sol.P[sol.output_index[k]], Pref), 2e-8) << "t = " << ref["t"][k];
  }
}

INSTANTIATE_TEST_SUITE_P(Solvers, RiccatiBothSolvers,
                         ::testing::Values(RiccatiSolver::RiccatiOde, RiccatiSolver::Hamiltonian),
                         [](const auto& info) { return solver_name(info.param); });

TEST(RiccatiSolvers, AgreeWithEachOtherAtEveryNode) {
  auto sys = load_model(std::string(ORDEX_TESTS_DIR) + "/data/riccati_tv.toml");
  Weights w = load_weights(std::string(ORDEX_TESTS_DIR) + "/data/riccati_tv_weights.toml", 2, 1);
  auto grid = linspace(0.0, 5.0, 51);
  RiccatiSolution a = solve_riccati(*sys, w, grid, options_for(RiccatiSolver::RiccatiOde));
  RiccatiSolution b = solve_riccati(*sys, w, grid, options_for(RiccatiSolver::Hamiltonian));
  ASSERT_EQ(a.nodes.size(), b.nodes.size());
  double worst = 0;
  for (std::size_t k = 0; k < a.nodes.size(); ++k) worst = std::max(worst, rel_err(a.P[k], b.P[k]));
  EXPECT_LT(worst, 1e-8);
  // Both keep P symmetric and positive semidefinite (Qf is positive definite here).
  for (const auto& P : b.P) EXPECT_GT(Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd>(P).eigenvalues().minCoeff(), 0);
}

TEST(RiccatiClosedLoop, SimulatedCostEqualsPredictedCost) {
  // For the optimal feedback, the cost of the closed-loop run from x0 is x0' P(t0) x0
  // (completing the square in the cost functional).
  auto sys = load_model(std::string(ORDEX_TESTS_DIR) + "/data/riccati_tv.toml");
  Weights w = load_weights(std::string(ORDEX_TESTS_DIR) + "/data/riccati_tv_weights.toml", 2, 1);
  for (RiccatiSolver s : {RiccatiSolver::RiccatiOde, RiccatiSolver::Hamiltonian}) {
    RegulatorOptions o;
    o.weights = w;
    o.riccati = options_for(s);
    o.x0 = Eigen::Vector2d(1.0, -0.5);
    RegulatorReport r = regulate(*sys, 0.0, 5.0, o);
    ASSERT_TRUE(r.closed_loop.run);
    const ClosedLoopRun& run = *r.closed_loop.run;
    EXPECT_NEAR(run.cost_simulated, run.cost_predicted, 1e-8 * run.cost_predicted) << solver_name(s);
    // The engine's closed-loop transition matrix carries x0 to the simulated final state.
    EXPECT_LT(r.closed_loop.agreement, 1e-7);
    // The cost is not trivially matched: a detuned gain (half of it) costs more.
    EXPECT_GT(run.cost_predicted, 0.1);
  }
}

TEST(RiccatiClosedLoop, DetunedGainCostsMore) {
  // The optimum is a minimum: halving P (hence the gain from it) raises the simulated cost.
  auto sys = load_model(std::string(ORDEX_TESTS_DIR) + "/data/riccati_tv.toml");
  Weights w = load_weights(std::string(ORDEX_TESTS_DIR) + "/data/riccati_tv_weights.toml", 2, 1);
  auto grid = linspace(0.0, 5.0, 101);
  RiccatiSolution sol = solve_riccati(*sys, w, grid, options_for(RiccatiSolver::Hamiltonian));
  Eigen::Vector2d x0(1.0, -0.5);
  ClosedLoopRun best = simulate_closed_loop(*sys, w, sol, x0, grid);
  RiccatiSolution detuned = sol;
  for (auto& P : detuned.P) P *= 0.5;
  for (auto& d : detuned.dP_left) d *= 0.5;
  for (auto& d : detuned.dP_right) d *= 0.5;
  ClosedLoopRun worse = simulate_closed_loop(*sys, w, detuned, x0, grid);
  EXPECT_GT(worse.cost_simulated, best.cost_simulated * (1 + 1e-4));
}

TEST(RiccatiWeights, RejectsIndefiniteTimeVaryingRAtFirstFailingTime) {
  auto sys = scalar_plant(0.5, 1.0);
  Weights w = default_weights(1, 1);
  w.R = WeightMatrix::function(1, 1, [](double t, MatrixRef m) { m(0, 0) = 2.0 - t; }, "w.toml: R");
  try {
    solve_riccati(*sys, w, linspace(0.0, 4.0, 5), RiccatiOptions{});
    FAIL() << "expected InputError";
  } catch (const InputError& e) {
    const std::string msg = e.what();
    EXPECT_NE(msg.find("w.toml: R: not positive definite at t = 2"), std::string::npos) << msg;
  }
}

TEST(RiccatiWeights, DenseGridHoldsOutputTimesAndBreakpoints) {
  std::vector<std::size_t> index;
  auto grid = dense_grid({0.0, 1.0, 2.0}, 10, {0.55, 1.0}, index);
  ASSERT_EQ(index.size(), 3u);
  EXPECT_EQ(grid[index[0]], 0.0);
  EXPECT_EQ(grid[index[1]], 1.0);
  EXPECT_EQ(grid[index[2]], 2.0);
  EXPECT_EQ(grid.size(), 12u);  // 10 intervals + 0.55 inserted; 1.0 already there
  EXPECT_TRUE(std::is_sorted(grid.begin(), grid.end()));
}
