// The Liouville line compared in logarithms: a determinant that underflows, an ill-conditioned
// Phi (closed form), and the cost of the trace integral on a 1,000-row linear table.
#include <gtest/gtest.h>

#include <cmath>
#include <fstream>
#include <iomanip>

#include "model/function_system.hpp"
#include "model/model_file.hpp"
#include "propagation/floquet.hpp"
#include "propagation/propagator.hpp"
#include "support.hpp"

namespace {

using namespace ordex;

PropagationOptions tight() {
  PropagationOptions o;
  o.rtol = 1e-11;
  o.atol = 1e-14;
  return o;
}

TEST(NumbersLiouville, DeterminantThatUnderflowsIsComparedInLogarithms) {
  // 20 states decaying at 40 + 5 sin t with a nilpotent coupling: Phi's entries are about
  // e^-40 (representable) but det Phi = exp(-20 (40 T + 5 (1 - cos T))) underflows for T = 1.
  const int n = 20;
  FunctionSystem s(std::vector<std::string>(n, "x"));
  s.set_A([n](double t, MatrixRef a) {
    a.setZero();
    for (int i = 0; i < n; ++i) a(i, i) = -(40 + 5 * std::sin(t));
    for (int i = 0; i + 1 < n; ++i) a(i, i + 1) = 0.7;
  });
  Propagator p(state_generator(s), tight());
  const double T = 1.0;
  const Eigen::MatrixXd phi = p.transition(0, T);
  const LiouvilleReport r = liouville_check(p.generator(), 0, T, phi, 1e-12, p.stats().error_estimate);
  // Closed form of the integral of the trace (trace A = -n (40 + 5 sin t)).
  const double exact = -n * (40 * T + 5 * (1 - std::cos(T)));
  EXPECT_EQ(r.det_phi, 0.0);  // underflowed: the old comparison of 0 with 0 said nothing
  EXPECT_NEAR(r.integral_trace, exact, 1e-12 * std::abs(exact));
  EXPECT_NEAR(r.log_abs_det, exact, 1e-8 * std::abs(exact));
  EXPECT_TRUE(r.meaningful);
  EXPECT_TRUE(r.passed) << r.note;
  EXPECT_TRUE(std::isfinite(r.relative_difference));
  EXPECT_LT(r.relative_difference, 1e-6);
  // A Phi off by 1e-3 in one entry must fail the same check (the check can fail).
  Eigen::MatrixXd wrong = phi;
  wrong(0, 0) *= 1.001;
  const LiouvilleReport bad = liouville_check(p.generator(), 0, T, wrong, 1e-12, p.stats().error_estimate);
  EXPECT_FALSE(bad.passed);
  EXPECT_NE(bad.note.find("less accurate"), std::string::npos) << bad.note;
}

FunctionSystem saddle(double a, double angle) {
  // A = R diag(a, -a) R' (trace 0): Phi(T, 0) = R diag(e^{aT}, e^{-aT}) R' in closed form.
  FunctionSystem s({"p", "q"});
  Eigen::Matrix2d r;
  r << std::cos(angle), -std::sin(angle), std::sin(angle), std::cos(angle);
  const Eigen::Matrix2d A = r * Eigen::Vector2d(a, -a).asDiagonal() * r.transpose();
  s.set_A([A](double, MatrixRef m) { m = A; });
  return s;
}

TEST(NumbersLiouville, IllConditionedPhiIsJudgedByItsCondition) {
  const double angle = 0.3;
  for (double aT : {8.0, 18.0}) {
    FunctionSystem s = saddle(1.0, angle);
    Propagator p(state_generator(s), tight());
    const Eigen::MatrixXd phi = p.transition(0, aT);
    Eigen::Matrix2d r;
    r << std::cos(angle), -std::sin(angle), std::sin(angle), std::cos(angle);
    const Eigen::Matrix2d exact = r * Eigen::Vector2d(std::exp(aT), std::exp(-aT)).asDiagonal() * r.transpose();
    // Phi itself is right (closed form above), to the engine's tolerance.
    EXPECT_LT((phi - exact).norm() / exact.norm(), 1e-8);
    const LiouvilleReport l = liouville_check(p.generator(), 0, aT, phi, 1e-12, p.stats().error_estimate);
    EXPECT_NEAR(l.integral_trace, 0.0, 1e-12);
    EXPECT_GT(l.condition, 0.1 * std::exp(2 * aT));  // cond(Phi) = e^{2aT} for this Phi
    if (aT == 8.0) {
      // cond 9e6: det Phi = 1 is checkable and the check passes, with a tolerance to match.
      EXPECT_TRUE(l.meaningful) << l.note;
      EXPECT_TRUE(l.passed) << l.note << " diff " << l.log_difference << " tol " << l.tolerance;
    } else {
      // cond 4e15: the determinant carries no digit; the check says so instead of "5e4".
      EXPECT_FALSE(l.meaningful);
      EXPECT_FALSE(l.passed);
      EXPECT_NE(l.note.find("condition"), std::string::npos) << l.note;
    }
  }
}

TEST(NumbersLiouville, TraceOfALinearTableIsIntegratedAtFixedCost) {
  // 1,000 rows: k(t) at t = 0 .. 999; A = [[0, 1], [-k, -0.1 k]], trace -0.1 k, linear between
  // rows, so the integral is exactly the trapezoid sum (the closed form for a polygon).
  const std::string dir = ordex_test::temp_dir();
  std::ofstream csv(dir + "/thousand.csv");
  csv << "t,k\n";
  std::vector<double> k(1000);
  for (int i = 0; i < 1000; ++i) {
    k[i] = 2.0 + std::sin(0.37 * i) + 0.5 * std::cos(1.3 * i);
    csv << i << "," << std::setprecision(17) << k[i] << "\n";
  }
  csv.close();
  ordex_test::write_file(dir + "/thousand.toml",
                         "[system]\nstates = [\"x\", \"v\"]\n[table]\nfile = \"thousand.csv\"\n"
                         "[matrices]\nA = [[0, 1], [\"-k\", \"-0.1*k\"]]\n");
  auto sys = load_model(dir + "/thousand.toml");
  Generator g = state_generator(*sys);
  ASSERT_GE(g.breakpoints.size(), 998u);
  double trapezoid = 0;
  for (int i = 0; i + 1 < 1000; ++i) trapezoid += 0.5 * (k[i] + k[i + 1]);
  trapezoid *= -0.1;
  long evals = 0, pieces = 0;
  double err = 0;
  const double v = integrate_trace(g, 0, 999, 1e-12, &err, &evals, &pieces);
  EXPECT_NEAR(v, trapezoid, 1e-11 * std::abs(trapezoid));
  EXPECT_EQ(pieces, 999);
  EXPECT_LE(evals, 16 * 999 + 1);  // one 15-point rule per piece (plus one scale probe)
  // And through the check itself (Phi = I here: only the count matters).
  const LiouvilleReport r = liouville_check(g, 0, 999, Eigen::Matrix2d::Identity());
  EXPECT_LE(r.trace_evaluations, 16 * 999 + 1);
}

}  // namespace
