// Gramians of constant (A, B, C): both routes against scipy's Van Loan block exponential, a stable
// pair's long window against scipy.linalg.solve_continuous_lyapunov, and the double integrator's
// closed form.
#include <gtest/gtest.h>

#include <nlohmann/json.hpp>

#include "gramian/gramian.hpp"
#include "gramian/gramian_lyapunov.hpp"
#include "model/time_grid.hpp"
#include "model/function_system.hpp"
#include "support.hpp"

namespace {

using ordex::GramianKind;
using ordex::GramianRoute;

Eigen::MatrixXd from_json(const nlohmann::json& j) {
  Eigen::MatrixXd m(j.size(), j[0].size());
  for (std::size_t i = 0; i < j.size(); ++i)
    for (std::size_t k = 0; k < j[i].size(); ++k) m(i, k) = j[i][k].get<double>();
  return m;
}

nlohmann::json matrix_json(const Eigen::MatrixXd& m) {
  nlohmann::json rows = nlohmann::json::array();
  for (int i = 0; i < m.rows(); ++i) {
    nlohmann::json r = nlohmann::json::array();
    for (int k = 0; k < m.cols(); ++k) r.push_back(m(i, k));
    rows.push_back(r);
  }
  return rows;
}

ordex::FunctionSystem constant_system(const Eigen::MatrixXd& a, const Eigen::MatrixXd& b, const Eigen::MatrixXd& c) {
  std::vector<std::string> states, inputs, outputs;
  for (int i = 0; i < a.rows(); ++i) states.push_back("x" + std::to_string(i + 1));
  for (int i = 0; i < b.cols(); ++i) inputs.push_back("u" + std::to_string(i + 1));
  for (int i = 0; i < c.rows(); ++i) outputs.push_back("y" + std::to_string(i + 1));
  ordex::FunctionSystem sys(states);
  sys.set_A([a](double, ordex::MatrixRef o) { o = a; });
  sys.set_B(inputs, [b](double, ordex::MatrixRef o) { o = b; });
  sys.set_C(outputs, [c](double, ordex::MatrixRef o) { o = c; });
  return sys;
}

nlohmann::json scipy_reference(const Eigen::MatrixXd& a, const Eigen::MatrixXd& b, const Eigen::MatrixXd& c,
                               double T, bool lyap) {
  nlohmann::json in;
  in["A"] = matrix_json(a);
  in["B"] = matrix_json(b);
  in["C"] = matrix_json(c);
  in["T"] = T;
  in["lyap"] = lyap;
  auto r = ordex_test::run_python("gramian_vanloan.py", "'" + in.dump() + "'");
  EXPECT_EQ(r.exit_code, 0) << r.err;
  return nlohmann::json::parse(r.out);
}

double rel_diff(const Eigen::MatrixXd& x, const Eigen::MatrixXd& ref) { return (x - ref).norm() / ref.norm(); }

ordex::GramianOptions options(GramianKind kind, GramianRoute route, ordex::Method method = ordex::Method::Auto) {
  ordex::GramianOptions o;
  o.kind = kind;
  o.route = route;
  o.propagation.method = method;
  o.propagation.rtol = 1e-11;
  o.propagation.atol = 1e-13;
  return o;
}

// A 4-state oscillator chain with two inputs and one output (not stable: one mode grows
// slowly), over [0.5, 3.5]: T = 3.
class ConstantPair : public ::testing::Test {
 protected:
  Eigen::MatrixXd a{4, 4}, b{4, 2}, c{1, 4};
  void SetUp() override {
    a << 0, 1, 0, 0,  -2, -0.3, 0.5, 0,  0, 0, 0, 1,  0.4, 0, -1.5, 0.1;
    b << 0, 0,  1, 0,  0, 0,  0.3, 1;
    c << 1, 0, 0.5, 0;
  }
};

TEST_F(ConstantPair, BothRoutesMatchVanLoanFromScipy) {
  auto sys = constant_system(a, b, c);
  auto ref = scipy_reference(a, b, c, 3.0, false);
  const std::pair<GramianKind, const char*> kinds[] = {{GramianKind::Controllability, "controllability"},
                                                       {GramianKind::Reachability, "reachability"},
                                                       {GramianKind::Observability, "observability"}};
  for (const auto& [kind, key] : kinds) {
    const Eigen::MatrixXd expected = from_json(ref[key]);  // scipy.linalg.expm, Van Loan 1978
    for (auto route : {GramianRoute::Block, GramianRoute::Lyapunov}) {
      auto r = ordex::compute_gramian(sys, 0.5, 3.5, options(kind, route), ordex::linspace(0.5, 3.5, 7));
      EXPECT_LT(rel_diff(r.gramian, expected), 1e-8) << key << " route " << ordex::route_name(route);
      EXPECT_EQ((r.gramian - r.gramian.transpose()).norm(), 0.0);
    }
    // BDF with the exact Lyapunov preconditioner.
    auto r = ordex::compute_gramian(sys, 0.5, 3.5, options(kind, GramianRoute::Lyapunov, ordex::Method::Bdf));
    EXPECT_LT(rel_diff(r.gramian, expected), 1e-6) << key << " lyapunov bdf";
  }
}

TEST(GramianConstant, StableLongWindowTendsToAlgebraicLyapunov) {
  Eigen::MatrixXd a(3, 3), b(3, 1), c(1, 3);
  a << -1, 2, 0,  -2, -1, 0,  0.5, 0, -0.7;
  b << 1, 0, 0.5;
  c << 0, 1, 1;
  auto sys = constant_system(a, b, c);
  auto ref = scipy_reference(a, b, c, 60.0, true);
  // The slowest decay is exp(-0.7 t): after 60 s the tail is below 1e-30 of the integral.
  auto r = ordex::compute_gramian(sys, 0, 60, options(GramianKind::Reachability, GramianRoute::Block));
  EXPECT_LT(rel_diff(r.gramian, from_json(ref["lyap_reach"])), 1e-8);  // solve_continuous_lyapunov
  auto o = ordex::compute_gramian(sys, 0, 60, options(GramianKind::Observability, GramianRoute::Lyapunov));
  EXPECT_LT(rel_diff(o.gramian, from_json(ref["lyap_obs"])), 1e-8);
}

TEST(GramianConstant, DoubleIntegratorClosedForm) {
  // x'' = u: W_r(0, T) = [[T^3/3, T^2/2], [T^2/2, T]], W_c = [[T^3/3, -T^2/2], [-T^2/2, T]]
  // (integrate Phi(T, s) B = [T - s, 1] and Phi(0, s) B = [-s, 1]; closed form).
  Eigen::MatrixXd a(2, 2), b(2, 1), c(1, 2);
  a << 0, 1, 0, 0;
  b << 0, 1;
  c << 1, 0;
  auto sys = constant_system(a, b, c);
  const double T = 2.5;
  Eigen::MatrixXd wr(2, 2), wc(2, 2);
  wr << T * T * T / 3, T * T / 2, T * T / 2, T;
  wc << T * T * T / 3, -T * T / 2, -T * T / 2, T;
  for (auto route : {GramianRoute::Block, GramianRoute::Lyapunov}) {
    EXPECT_LT(rel_diff(ordex::compute_gramian(sys, 0, T, options(GramianKind::Reachability, route)).gramian, wr), 1e-10);
    EXPECT_LT(rel_diff(ordex::compute_gramian(sys, 0, T, options(GramianKind::Controllability, route)).gramian, wc), 1e-10);
  }
}

TEST(GramianConstant, LyapunovSolverSatisfiesItsEquation) {
  // The preconditioner's solve of M X + X M' = R, checked by substituting X back.
  Eigen::MatrixXd m = Eigen::MatrixXd::Random(7, 7) + 3 * Eigen::MatrixXd::Identity(7, 7);
  Eigen::MatrixXd r = Eigen::MatrixXd::Random(7, 7);
  ordex::SchurLyapunovSolver s;  // M X + X M' = F' X + X F with F = M'
  s.factor(m.transpose());
  s.set_shift(0.0, 1.0);
  Eigen::MatrixXd x;
  s.solve(r, x);
  EXPECT_LT((m * x + x * m.transpose() - r).norm(), 1e-12 * r.norm() * m.norm());
}

}  // namespace

namespace {

TEST(GramianConstant, StiffDiagonalPairOnOneLongInterval) {
  // A = diag(-1, -40, -900), B = [1; 2; 3] over [0, 5]: the -A' block grows like exp(900 t), so
  // the sweep must split the interval itself. Closed form for diagonal A:
  // W_r(i, j) = b_i b_j (1 - exp((l_i + l_j) T)) / -(l_i + l_j).
  const Eigen::Vector3d l(-1, -40, -900), bv(1, 2, 3);
  ordex::FunctionSystem sys({"a", "b", "c"});
  sys.set_A([l](double, ordex::MatrixRef o) { o = l.asDiagonal(); });
  sys.set_B({"u"}, [bv](double, ordex::MatrixRef o) { o = bv; });
  const double T = 5;
  Eigen::Matrix3d expected;
  for (int i = 0; i < 3; ++i)
    for (int j = 0; j < 3; ++j) expected(i, j) = bv[i] * bv[j] * -std::expm1((l[i] + l[j]) * T) / -(l[i] + l[j]);
  auto r = ordex::compute_gramian(sys, 0, T, options(GramianKind::Reachability, GramianRoute::Block));
  EXPECT_LT(rel_diff(r.gramian, expected), 1e-9);
  auto bdf = ordex::compute_gramian(sys, 0, T, options(GramianKind::Reachability, GramianRoute::Lyapunov, ordex::Method::Bdf));
  EXPECT_LT(rel_diff(bdf.gramian, expected), 1e-6);
}

}  // namespace
