// The periodic steady state of the regulator's and the filter's Riccati equations against outside
// references: scipy.linalg.solve_continuous_are for constant plants declared periodic (the
// periodic solution of a constant problem is the algebraic one), the long-horizon limit of the
// finite-horizon solution for a pumped oscillator, and the error for an unstabilizable plant.
#include <gtest/gtest.h>

#include <cmath>
#include <iostream>
#include <nlohmann/json.hpp>

#include "io/errors.hpp"
#include "model/function_system.hpp"
#include "riccati/periodic_filter.hpp"
#include "riccati/periodic_regulator.hpp"
#include "riccati/periodic_subspace.hpp"
#include "job_support.hpp"
#include "support.hpp"

using namespace ordex;

namespace {

nlohmann::json to_py(const Eigen::MatrixXd& m) {
  nlohmann::json j = nlohmann::json::array();
  for (Eigen::Index i = 0; i < m.rows(); ++i) {
    nlohmann::json row = nlohmann::json::array();
    for (Eigen::Index k = 0; k < m.cols(); ++k) row.push_back(m(i, k));
    j.push_back(row);
  }
  return j;
}

nlohmann::json care(const Eigen::MatrixXd& A, const Eigen::MatrixXd& B, const Eigen::MatrixXd& Q,
                    const Eigen::MatrixXd& R) {
  nlohmann::json in = {{"A", to_py(A)}, {"B", to_py(B)}, {"Q", to_py(Q)}, {"R", to_py(R)}};
  auto py = ordex_test::run_python("riccati_care.py", "'" + in.dump() + "'");
  EXPECT_EQ(py.exit_code, 0) << py.err;
  return nlohmann::json::parse(py.out);
}

double rel_err(const Eigen::MatrixXd& a, const Eigen::MatrixXd& b) {
  return (a - b).cwiseAbs().maxCoeff() / std::max(1e-300, b.cwiseAbs().maxCoeff());
}

// A constant 3-state plant with 2 inputs and 2 outputs, declared periodic with period 1.7.
const Eigen::MatrixXd& A3() {
  static const Eigen::MatrixXd A = (Eigen::MatrixXd(3, 3) << 0.1, 1.0, 0.0, -0.4, 0.2, 0.5, 0.3, 0.0, -0.6).finished();
  return A;
}
const Eigen::MatrixXd& B3() {
  static const Eigen::MatrixXd B = (Eigen::MatrixXd(3, 2) << 0.0, 0.2, 1.0, 0.0, 0.0, 0.7).finished();
  return B;
}
const Eigen::MatrixXd& C3() {
  static const Eigen::MatrixXd C = (Eigen::MatrixXd(2, 3) << 1.0, 0.0, 0.0, 0.0, 0.5, 1.0).finished();
  return C;
}

std::unique_ptr<FunctionSystem> constant_periodic_plant() {
  auto sys = std::make_unique<FunctionSystem>(std::vector<std::string>{"a", "b", "c"});
  sys->set_A([](double, MatrixRef m) { m = A3(); });
  sys->set_B({"u1", "u2"}, [](double, MatrixRef m) { m = B3(); });
  sys->set_C({"y1", "y2"}, [](double, MatrixRef m) { m = C3(); });
  sys->set_period(1.7);
  return sys;
}

// A parametrically pumped oscillator of our own: x'' + (1 - 0.6 cos 2t) x = f, period pi, inside
// the first instability tongue of the Mathieu equation (a = 1, q = 0.3), so unstable open loop.
// With UNCONTROLLABLE, a third state z' = 0.2 z that no input reaches (multiplier e^{0.2 pi}).
std::unique_ptr<FunctionSystem> pumped_oscillator(bool uncontrollable = false) {
  const int n = uncontrollable ? 3 : 2;
  std::vector<std::string> names{"x", "v"};
  if (uncontrollable) names.push_back("z");
  auto sys = std::make_unique<FunctionSystem>(names);
  sys->set_A([n](double t, MatrixRef m) {
    m.setZero();
    m(0, 1) = 1.0;
    m(1, 0) = -(1.0 - 0.6 * std::cos(2 * t));
    m(1, 1) = -0.02;
    if (n == 3) m(2, 2) = 0.2;
  });
  sys->set_B({"f"}, [](double, MatrixRef m) {
    m.setZero();
    m(1, 0) = 1.0;
  });
  sys->set_C({"xm"}, [](double, MatrixRef m) {
    m.setZero();
    m(0, 0) = 1.0;
  });
  sys->set_period(M_PI);
  return sys;
}

Weights constant_weights(const Eigen::MatrixXd& Q, const Eigen::MatrixXd& R) {
  Weights w = default_weights(static_cast<int>(Q.rows()), static_cast<int>(R.rows()));
  w.Q = WeightMatrix::constant(Q, "Q");
  w.R = WeightMatrix::constant(R, "R");
  return w;
}

RegulatorOptions tight() {
  RegulatorOptions o;
  o.riccati.propagation.rtol = 1e-10;
  o.riccati.propagation.atol = 1e-12;
  return o;
}

}  // namespace

TEST(PeriodicSubspace, ReorderingKeepsTheSchurFormAndPutsTheStableFirst) {
  // A random real matrix with eigenvalues on both sides of the unit circle.
  Eigen::MatrixXd M(6, 6);
  M << 2.0, 0.3, -0.1, 0.0, 0.5, 0.2, 0.1, 0.3, 0.4, -0.2, 0.0, 0.1, 0.0, -0.7, 0.2, 0.3, 0.1, 0.0, 0.3, 0.0, 0.1,
      -1.5, 0.2, 0.4, 0.0, 0.2, 0.0, 0.1, 0.05, 0.9, 0.1, 0.0, 0.3, 0.0, -1.2, 3.0;
  Eigen::ComplexSchur<Eigen::MatrixXcd> schur(M.cast<std::complex<double>>());
  Eigen::MatrixXcd T = schur.matrixT(), U = schur.matrixU();
  const int k = reorder_schur(T, U, 1e-9);
  // Count of stable eigenvalues from Eigen's unordered eigenvalues (independent of the reordering).
  const Eigen::VectorXcd ev = M.eigenvalues();
  int stable = 0;
  for (Eigen::Index i = 0; i < ev.size(); ++i) stable += std::abs(ev(i)) < 1.0;
  EXPECT_EQ(k, stable);
  for (int i = 0; i < 6; ++i) EXPECT_EQ(std::abs(T(i, i)) < 1.0, i < k) << i;
  EXPECT_LT((U * T * U.adjoint() - M.cast<std::complex<double>>()).norm(), 1e-12 * M.norm());
  EXPECT_LT((U.adjoint() * U - Eigen::MatrixXcd::Identity(6, 6)).norm(), 1e-13);
  EXPECT_LT(T.triangularView<Eigen::StrictlyLower>().toDenseMatrix().norm(), 1e-14);
}

TEST(PeriodicRegulator, ConstantPlantDeclaredPeriodicIsTheAlgebraicSolution) {
  auto sys = constant_periodic_plant();
  const Eigen::MatrixXd Q = Eigen::Vector3d(2.0, 1.0, 0.5).asDiagonal();
  const Eigen::MatrixXd R = (Eigen::MatrixXd(2, 2) << 1.0, 0.1, 0.1, 0.5).finished();
  RegulatorOptions o = tight();
  o.weights = constant_weights(Q, R);
  o.samples = 5;
  const PeriodicRegulatorReport rep = regulate_periodic(*sys, 0.3, o);
  // scipy.linalg.solve_continuous_are on the same matrices.
  const nlohmann::json ref = care(A3(), B3(), Q, R);
  const Eigen::MatrixXd P = ordex_test::matrix_from_json(ref["P"]), K = ordex_test::matrix_from_json(ref["K"]);
  EXPECT_LT(rel_err(rep.steady.P0_subspace, P), 1e-8);
  EXPECT_LT(rel_err(rep.regulator.P0, P), 1e-8);
  for (std::size_t k = 0; k < rep.regulator.gains.size(); ++k) EXPECT_LT(rel_err(rep.regulator.gains[k], K), 1e-7) << k;
  EXPECT_LE(rep.steady.gap, 1e-6);
  EXPECT_EQ(rep.steady.passes, 1);
  // Closed-loop multipliers are exp(T lambda) of A - B K's eigenvalues (scipy's).
  ASSERT_TRUE(rep.regulator.closed_loop.floquet);
  const FloquetReport& f = rep.regulator.closed_loop.floquet->floquet;
  EXPECT_TRUE(f.stable);
  double largest = 0;
  for (std::size_t i = 0; i < ref["closed_loop_eigenvalues_re"].size(); ++i)
    largest = std::max(largest, std::exp(1.7 * ref["closed_loop_eigenvalues_re"][i].get<double>()));
  EXPECT_NEAR(f.largest_modulus, largest, 1e-7);
}

TEST(PeriodicRegulator, PumpedOscillatorIsTheLongHorizonLimitAndStabilizes) {
  auto sys = pumped_oscillator();
  const Eigen::MatrixXd Q = Eigen::Vector2d(1.0, 0.2).asDiagonal();
  const Eigen::MatrixXd R = Eigen::MatrixXd::Constant(1, 1, 0.5);
  RegulatorOptions o = tight();
  o.weights = constant_weights(Q, R);
  o.samples = 9;
  const PeriodicRegulatorReport rep = regulate_periodic(*sys, 0.0, o);
  // The finite-horizon solution (Qf = 0) over 20 periods: at t0 it has forgotten its terminal
  // value (the backward flow contracts by |mu_cl|^2 a period), so it is the periodic one.
  RegulatorOptions lo = tight();
  lo.weights = constant_weights(Q, R);
  lo.check_closed_loop = false;
  lo.riccati.dense_intervals = 4000;
  const RegulatorReport longer = regulate(*sys, 0.0, 20 * M_PI, lo);
  EXPECT_LT(rel_err(rep.regulator.P0, longer.P0), 1e-7);
  // A quarter period in: the finite-horizon schedule sampled at pi/4 (its 1/80 point).
  const RegulatorReport quarter = regulate(*sys, M_PI / 4, 20 * M_PI + M_PI / 4, lo);
  EXPECT_LT(rel_err(rep.regulator.P[2], quarter.P0), 1e-7);
  EXPECT_LT(rel_err(rep.regulator.gains[2], quarter.K0), 1e-7);
  // Open loop unstable (inside the Mathieu tongue), closed loop inside the unit circle.
  EXPECT_FALSE(rep.steady.open_loop.stable);
  EXPECT_GT(rep.steady.open_loop.largest_modulus, 1.1);
  ASSERT_TRUE(rep.regulator.closed_loop.floquet);
  EXPECT_TRUE(rep.regulator.closed_loop.floquet->floquet.stable);
  EXPECT_LT(rep.regulator.closed_loop.floquet->floquet.largest_modulus, 0.9);
  // Liouville on the Hamiltonian (trace 0): the multipliers come in pairs mu, 1/mu; the stable
  // ones are the closed-loop multipliers.
  const Eigen::VectorXcd& hm = rep.steady.hamiltonian_multipliers;
  EXPECT_NEAR(std::abs(hm(0) * hm(1) * hm(2) * hm(3)), 1.0, 1e-7);
  EXPECT_NEAR(std::abs(hm(0) * hm(1)), std::abs(rep.regulator.closed_loop.floquet->floquet.multipliers.prod()), 1e-7);
}

TEST(PeriodicRegulator, WithX0TheSimulatedCostOverOnePeriodIsTheQuadraticForm) {
  auto sys = pumped_oscillator();
  RegulatorOptions o = tight();
  o.x0 = Eigen::Vector2d(0.3, -0.1);
  o.samples = 5;
  const PeriodicRegulatorReport rep = regulate_periodic(*sys, 0.0, o);
  // Dynamic programming: int_0^T (x'Qx + u'Ru) + x(T)'P(0)x(T) = x0' P(0) x0.
  ASSERT_TRUE(rep.regulator.closed_loop.run);
  EXPECT_NEAR(rep.regulator.closed_loop.run->cost_simulated, *rep.regulator.cost_predicted,
              1e-6 * *rep.regulator.cost_predicted);
}

TEST(PeriodicRegulator, UnstabilizableModeIsNamed) {
  auto sys = pumped_oscillator(true);
  try {
    regulate_periodic(*sys, 0.0, tight());
    FAIL() << "no error";
  } catch (const NumericalError& e) {
    const std::string what = e.what();
    EXPECT_NE(what.find("not stabilizable"), std::string::npos) << what;
    // The uncontrollable multiplier e^{0.2 pi} = 1.8744...
    EXPECT_NE(what.find("1.874"), std::string::npos) << what;
  }
}

TEST(PeriodicRegulator, ModelWithoutPeriodIsRefused) {
  auto sys = ordex_test::scalar_plant(1.0, 1.0);
  const std::string msg = ordex_test::input_error_of([&] { regulate_periodic(*sys, 0.0); });
  EXPECT_NE(msg.find("no period"), std::string::npos) << msg;
}

TEST(PeriodicFilter, ConstantPlantIsTheDualAlgebraicSolution) {
  auto sys = constant_periodic_plant();
  const Eigen::MatrixXd V = (Eigen::MatrixXd(3, 3) << 0.5, 0.1, 0.0, 0.1, 0.3, 0.0, 0.0, 0.0, 0.2).finished();
  const Eigen::MatrixXd Rn = (Eigen::MatrixXd(2, 2) << 0.04, 0.0, 0.0, 0.09).finished();
  PeriodicFilterOptions o;
  o.riccati.propagation.rtol = 1e-10;
  o.riccati.propagation.atol = 1e-12;
  o.samples = 5;
  const PeriodicFilterSolution f =
      periodic_filter(*sys, 0.0, WeightMatrix::constant(V, "Vn"), WeightMatrix::constant(Rn, "Rn"), o);
  // scipy.linalg.solve_continuous_are(A', C', G Qn G', Rn): the filter's algebraic covariance.
  const nlohmann::json ref = care(A3().transpose(), C3().transpose(), V, Rn);
  const Eigen::MatrixXd P = ordex_test::matrix_from_json(ref["P"]);
  const Eigen::MatrixXd L = P * C3().transpose() * Rn.inverse();
  for (std::size_t k = 0; k < f.times.size(); ++k) {
    EXPECT_LT(rel_err(f.P[k], P), 1e-7) << "t = " << f.times[k];
    EXPECT_LT(rel_err(f.L[k], L), 1e-7) << "t = " << f.times[k];
  }
  EXPECT_DOUBLE_EQ(f.times.front(), 0.0);
  EXPECT_DOUBLE_EQ(f.times.back(), 1.7);
  // The multipliers of A - L C over one period: exp(1.7 eig(A - L C)).
  const Eigen::VectorXcd ev = (A3() - L * C3()).eigenvalues();
  double largest = 0;
  for (Eigen::Index i = 0; i < ev.size(); ++i) largest = std::max(largest, std::exp(1.7 * ev(i).real()));
  EXPECT_NEAR(f.closed_loop.largest_modulus, largest, 1e-7);
  EXPECT_TRUE(f.closed_loop.stable);
}

TEST(PeriodicFilter, PumpedOscillatorIsTheLongWindowLimitOfTheForwardFilter) {
  // The filter's forward Riccati equation from P(t0 - 20 T) = 0 reaches the periodic solution at
  // t0; by duality that is the dual regulator's long horizon, which we integrate here with the
  // same plant written as its time-reversed transpose by hand (an independent construction).
  auto sys = pumped_oscillator();
  const Eigen::MatrixXd V = Eigen::Vector2d(0.0, 0.3).asDiagonal();
  const Eigen::MatrixXd Rn = Eigen::MatrixXd::Constant(1, 1, 0.01);
  PeriodicFilterOptions o;
  o.riccati.propagation.rtol = 1e-10;
  o.riccati.propagation.atol = 1e-12;
  o.samples = 5;
  const PeriodicFilterSolution f =
      periodic_filter(*sys, 0.0, WeightMatrix::constant(V, "Vn"), WeightMatrix::constant(Rn, "Rn"), o);
  FunctionSystem dual({"x", "v"});
  dual.set_A([](double s, MatrixRef m) {
    const double t = -s;
    m << 0.0, -(1.0 - 0.6 * std::cos(2 * t)), 1.0, -0.02;
  });
  dual.set_B({"xm"}, [](double, MatrixRef m) { m << 1.0, 0.0; });
  RegulatorOptions ro = tight();
  ro.weights = constant_weights(V, Rn);
  ro.check_closed_loop = false;
  ro.riccati.dense_intervals = 4000;
  // P_filter(t) = P_dual(-t): the filter at t = pi/2 from a window starting 20 periods earlier.
  const RegulatorReport longer = regulate(dual, -M_PI / 2, -M_PI / 2 + 20 * M_PI, ro);
  EXPECT_LT(rel_err(f.P[2], longer.P0), 1e-7);
  EXPECT_FALSE(f.open_loop.stable);
  EXPECT_TRUE(f.closed_loop.stable);
}

TEST(PeriodicFilter, UndetectableModeIsNamed) {
  auto sys = pumped_oscillator(true);  // z is not measured
  const Eigen::MatrixXd V = Eigen::Vector3d(0.1, 0.1, 0.1).asDiagonal();
  try {
    periodic_filter(*sys, 0.0, WeightMatrix::constant(V, "Vn"), WeightMatrix::constant(Eigen::MatrixXd::Identity(1, 1), "Rn"));
    FAIL() << "no error";
  } catch (const NumericalError& e) {
    const std::string what = e.what();
    EXPECT_NE(what.find("not detectable"), std::string::npos) << what;
    EXPECT_NE(what.find("1.874"), std::string::npos) << what;
  }
}

TEST(PeriodicRegulator, LongPeriodStillMatchesTheAlgebraicSolution) {
  // Periods 40 and 90: the Hamiltonian monodromy spans about exp(2 * 40 * |lambda|) in scale, far past
  // what double precision separates in one product; the report must say how the subspace fared
  // and the result must still be scipy's algebraic solution (the backward passes refine it).
  for (const double period : {40.0, 90.0}) {
  auto sys = constant_periodic_plant();
  sys->set_period(period);
  const Eigen::MatrixXd Q = Eigen::Vector3d(2.0, 1.0, 0.5).asDiagonal();
  const Eigen::MatrixXd R = Eigen::MatrixXd::Identity(2, 2);
  RegulatorOptions o = tight();
  o.weights = constant_weights(Q, R);
  o.samples = 3;
  o.check_closed_loop = false;
  const PeriodicRegulatorReport rep = regulate_periodic(*sys, 0.0, o);
  const nlohmann::json ref = care(A3(), B3(), Q, R);
  EXPECT_LT(rel_err(rep.regulator.P0, ordex_test::matrix_from_json(ref["P"])), 1e-7)
      << "passes " << rep.steady.passes << ", first gap " << rep.steady.first_gap << ", |M| " << rep.steady.monodromy_norm;
  EXPECT_LE(rep.steady.gap, 1e-6);
  // Period 90 (max |M| ~ 1e34): the stable multipliers are below round-off of the largest; the
  // report says the subspace was not separated and the passes from P = 0 were used.
  if (period > 80) EXPECT_NE(rep.steady.note.find("could not be separated"), std::string::npos) << rep.steady.note;
  if (period < 50) EXPECT_EQ(rep.steady.note, "");
  std::cout << "period " << period << ": passes " << rep.steady.passes << ", first gap " << rep.steady.first_gap << ", max|M| "
            << rep.steady.monodromy_norm << ", X1 rcond " << rep.steady.x1_rcond << "\n";
  }
}
