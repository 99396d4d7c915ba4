// The Kalman-Bucy filter of lib/estimation against outside references: the scalar Riccati
// equation's closed form (derived below), and the algebraic Riccati equation of scipy for a
// constant system over a long window; the two routes against each other; bad noise rejected.
#include <gtest/gtest.h>

#include <cmath>
#include <nlohmann/json.hpp>

#include "estimation/estimate.hpp"
#include "job_support.hpp"
#include "model/function_system.hpp"
#include "support.hpp"

using namespace ordex;

namespace {

// x' = a x + b_u u + g w (inputs "u", "w"), y = c x.
std::unique_ptr<FunctionSystem> scalar_filter_plant(double a, double g, double c) {
  auto sys = std::make_unique<FunctionSystem>(std::vector<std::string>{"x"});
  sys->set_A([a](double, MatrixRef m) { m(0, 0) = a; });
  sys->set_B({"u", "w"}, [g](double, MatrixRef m) { m << 1.0, g; });
  sys->set_C({"y"}, [c](double, MatrixRef m) { m(0, 0) = c; });
  return sys;
}

NoiseModel scalar_noise(double q, double r, double p0) {
  NoiseModel n;
  n.Qn = WeightMatrix::constant(Eigen::MatrixXd::Constant(1, 1, q), "Qn");
  n.Rn = WeightMatrix::constant(Eigen::MatrixXd::Constant(1, 1, r), "Rn");
  n.P0 = Eigen::MatrixXd::Constant(1, 1, p0);
  n.through = {"w"};
  return n;
}

// The scalar Kalman-Bucy equation p' = 2 a p + qe - s p^2 (qe = g^2 q, s = c^2 / r) in closed
// form. Derivation: with beta = sqrt(a^2 + s qe) and p = a/s + (beta/s) v the equation becomes
// v' = beta (1 - v^2) (because qe + a^2/s = beta^2/s), whose solutions through v(0) = v0 are
// v = tanh(beta t + atanh v0) for |v0| < 1 and v = coth(beta t + acoth v0) for |v0| > 1. (The same
// tanh form as the scalar regulator, METHODS.md "Riccati"; the substitution is the standard one
// for a Riccati equation with constant coefficients.)
double scalar_kb(double a, double qe, double s, double p0, double t) {
  const double beta = std::sqrt(a * a + s * qe), v0 = (s * p0 - a) / beta;
  const double v = std::abs(v0) < 1 ? std::tanh(beta * t + std::atanh(v0))
                                     : 1.0 / std::tanh(beta * t + 0.5 * std::log((v0 + 1) / (v0 - 1)));
  return a / s + beta / s * v;
}

}  // namespace

class ScalarKalmanBucy : public ::testing::TestWithParam<std::tuple<RiccatiSolver, double>> {};

TEST_P(ScalarKalmanBucy, MatchesTheClosedFormOnBothRoutes) {
  const auto [solver, p0] = GetParam();
  const double a = -0.4, g = 1.5, c = 2.0, q = 0.3, r = 0.1;
  auto sys = scalar_filter_plant(a, g, c);
  EstimationOptions o;
  o.noise = scalar_noise(q, r, p0);
  o.solver = solver;
  o.samples = 41;
  const EstimationReport rep = estimate(*sys, 0.0, 4.0, o);
  ASSERT_EQ(rep.history_times.size(), 41u);
  const double qe = g * g * q, s = c * c / r;
  for (std::size_t k = 0; k < rep.history_times.size(); ++k) {
    // (The closed form at t = 0 with p0 = 0 rounds to -2e-18: clamp and allow 1e-12.)
    const double t = rep.history_times[k], expected = std::max(0.0, scalar_kb(a, qe, s, p0, t));
    EXPECT_NEAR(rep.P[k](0, 0), expected, 1e-6 * expected + 1e-12) << "t = " << t;
    // L = P C' Rn^-1.
    EXPECT_NEAR(rep.gains[k](0, 0), expected * c / r, 1e-6 * expected * c / r + 1e-12) << "t = " << t;
    EXPECT_NEAR(rep.sigma[k](0), std::sqrt(expected), 1e-6 * std::sqrt(expected) + 1e-9);
  }
  // The steady state (a + beta)/s is reached by t = 4 (beta t ~ 8).
  EXPECT_NEAR(rep.P_final(0, 0), (a + std::sqrt(a * a + s * qe)) / s, 1e-5);
  ASSERT_TRUE(rep.agreement.has_value());
  EXPECT_LT(*rep.agreement, 1e-6);
}

// P0 below the steady state (the tanh branch) and above it (the coth branch).
INSTANTIATE_TEST_SUITE_P(Routes, ScalarKalmanBucy,
                         ::testing::Combine(::testing::Values(RiccatiSolver::RiccatiOde, RiccatiSolver::Hamiltonian),
                                            ::testing::Values(0.0, 0.02, 3.0)));

TEST(KalmanBucy, ConstantSystemTendsToTheAlgebraicSolutionOfScipy) {
  // Three states, noise through an explicit G (3 x 2), two outputs.
  Eigen::MatrixXd A(3, 3), G(3, 2), C(2, 3), Qn(2, 2), Rn(2, 2);
  A << 0, 1, 0, -2, -0.3, 1, 0.5, 0, -1;
  G << 0.2, 0, 1, 0.1, 0, 0.7;
  C << 1, 0, 0, 0, 0, 1;
  Qn << 0.5, 0.1, 0.1, 0.3;
  Rn << 0.02, 0.005, 0.005, 0.04;
  auto sys = std::make_unique<FunctionSystem>(std::vector<std::string>{"x1", "x2", "x3"});
  sys->set_A([A](double, MatrixRef m) { m = A; });
  sys->set_C({"y1", "y2"}, [C](double, MatrixRef m) { m = C; });
  NoiseModel noise;
  noise.G = WeightMatrix::constant(G, "G");
  noise.Qn = WeightMatrix::constant(Qn, "Qn");
  noise.Rn = WeightMatrix::constant(Rn, "Rn");
  noise.P0 = Eigen::MatrixXd::Identity(3, 3);
  EstimationOptions o;
  o.noise = noise;
  const EstimationReport rep = estimate(*sys, 0.0, 40.0, o);

  // scipy.linalg.solve_continuous_are(A', C', G Qn G', Rn): the filter's algebraic equation is
  // the regulator's for the dual system (riccati_care.py solves A'X + XA - XBR^-1B'X + Q = 0).
  nlohmann::json in;
  const auto rows = ordex_test::json_rows;
  in["A"] = rows(A.transpose());
  in["B"] = rows(C.transpose());
  in["Q"] = rows(G * Qn * G.transpose());
  in["R"] = rows(Rn);
  auto py = ordex_test::run_python("riccati_care.py", "'" + in.dump() + "'");
  ASSERT_EQ(py.exit_code, 0) << py.err;
  const Eigen::MatrixXd P = ordex_test::matrix_from_json(nlohmann::json::parse(py.out)["P"]);
  EXPECT_LT((rep.P_final - P).norm(), 1e-6 * P.norm()) << rep.P_final << "\nscipy:\n" << P;
  // The gain of the dual problem's K is L' (K = R^-1 B'P with B = C').
  const Eigen::MatrixXd K = ordex_test::matrix_from_json(nlohmann::json::parse(py.out)["K"]);
  EXPECT_LT((rep.gains.back() - K.transpose()).norm(), 1e-5 * K.norm());
  ASSERT_TRUE(rep.agreement.has_value());
  EXPECT_LT(*rep.agreement, 1e-6);
  EXPECT_EQ(rep.to_json()["kind"], "kalman-bucy");
}

TEST(KalmanBucy, RejectsBadNoiseNamingTheKey) {
  auto sys = scalar_filter_plant(-1, 1, 1);
  auto run = [&](NoiseModel n) {
    EstimationOptions o;
    o.noise = std::move(n);
    return ordex_test::input_error_of([&] { estimate(*sys, 0.0, 1.0, o); });
  };
  NoiseModel n = scalar_noise(-0.1, 1.0, 1.0);  // indefinite Qn
  n.Qn = WeightMatrix::constant(Eigen::MatrixXd::Constant(1, 1, -0.1), "noise.toml: Qn");
  EXPECT_NE(run(n).find("noise.toml: Qn: not positive semidefinite"), std::string::npos) << run(n);
  n = scalar_noise(0.1, 0.0, 1.0);
  n.Rn = WeightMatrix::constant(Eigen::MatrixXd::Zero(1, 1), "noise.toml: Rn");
  EXPECT_NE(run(n).find("noise.toml: Rn: not positive definite"), std::string::npos) << run(n);
  n = scalar_noise(0.1, 1.0, 1.0);
  n.through = {"gust"};
  EXPECT_NE(run(n).find("no input 'gust'"), std::string::npos) << run(n);
  n = scalar_noise(0.1, 1.0, 1.0);
  n.Rn.reset();
  EXPECT_NE(run(n).find("Rn: missing"), std::string::npos) << run(n);
  EstimationOptions o;
  EXPECT_NE(ordex_test::input_error_of([&] { estimate(*sys, 0.0, 1.0, o); }).find("EstimationOptions::noise"),
            std::string::npos);
}

TEST(KalmanBucy, TimeVaryingRoutesAgree) {
  // A periodic plant with a time-varying measurement matrix and noise intensity: no closed
  // form, but the two routes solve it by unrelated means.
  auto sys = std::make_unique<FunctionSystem>(std::vector<std::string>{"x", "v"});
  sys->set_A([](double t, MatrixRef m) { m << 0, 1, -(1 + 0.3 * std::cos(2 * t)), -0.1; });
  sys->set_B({"w"}, [](double, MatrixRef m) { m << 0, 1; });
  sys->set_C({"y"}, [](double t, MatrixRef m) { m << 1, 0.5 * std::sin(t); });
  NoiseModel n;
  n.through = {"w"};
  n.Qn = WeightMatrix::function(1, 1, [](double t, MatrixRef m) { m(0, 0) = 0.2 + 0.1 * std::sin(t); }, "Qn");
  n.Rn = WeightMatrix::constant(Eigen::MatrixXd::Constant(1, 1, 0.05), "Rn");
  n.P0 = Eigen::Vector2d(1.0, 0.5).asDiagonal();
  EstimationOptions o;
  o.noise = n;
  const EstimationReport rep = estimate(*sys, 0.0, 10.0, o);
  ASSERT_TRUE(rep.agreement.has_value());
  EXPECT_LT(*rep.agreement, 1e-6);
  // Measurements shrink the uncertainty from P0.
  EXPECT_LT(rep.P_final.trace(), n.P0.trace());
}
