// The symmetric matrix equation service's explicit Runge-Kutta scheme (explicit_rk.hpp) and the
// probe that picks it (scheme_probe.hpp), against the closed form of the covariance of an
// undamped oscillator driven by white noise (elementary calculus, written out below).
#include <gtest/gtest.h>

#include <cmath>

#include "io/errors.hpp"
#include "propagation/symmetric_matrix_ode.hpp"

using namespace ordex;

namespace {

// x'' = -w^2 x + noise of intensity q: A = [[0, 1], [-w^2, 0]], S = diag(0, q). With
// Phi(s) = [[cos ws, sin ws / w], [-w sin ws, cos ws]] and P(0) = I,
//   P(t) = Phi(t) Phi(t)' + q int_0^t c(s) c(s)' ds,  c(s) = [sin(ws)/w, cos(ws)]',
//   int sin^2 = t/2 - sin(2wt)/(4w),  int cos^2 = t/2 + sin(2wt)/(4w),  int sin cos = sin^2(wt)/(2w).
Eigen::MatrixXd oscillator_covariance(double w, double q, double t) {
  Eigen::Matrix2d phi;
  phi << std::cos(w * t), std::sin(w * t) / w, -w * std::sin(w * t), std::cos(w * t);
  const double ss = t / 2 - std::sin(2 * w * t) / (4 * w), cc = t / 2 + std::sin(2 * w * t) / (4 * w),
               sc = std::pow(std::sin(w * t), 2) / (2 * w);
  Eigen::Matrix2d noise;
  noise << ss / (w * w), sc / w, sc / w, cc;
  return phi * phi.transpose() + q * noise;
}

SymmetricMatrixOde oscillator_equation(double w, double q) {
  SymmetricMatrixOde eq;
  eq.n = 2;
  eq.F = [w](double, MatrixRef F) { F << 0, 1, -w * w, 0; };
  eq.S = [q](double, MatrixRef S) { S << 0, 0, 0, q; };
  eq.label = "oscillator covariance";
  return eq;
}

double relative_gap(const Eigen::MatrixXd& a, const Eigen::MatrixXd& b) { return (a - b).norm() / b.norm(); }

}  // namespace

TEST(SchemeProbe, PicksRungeKuttaForAnOscillatorAndBdfForStiffOrSlowPlants) {
  const double w = 20, q = 3;
  EXPECT_EQ(probe_symmetric_ode(oscillator_equation(w, q), 0, Eigen::Matrix2d::Identity(), 20).scheme,
            OdeScheme::RungeKutta);  // 400 rad over the window, no damping
  // The same oscillator over 2 s: 40 rad, BDF.
  EXPECT_EQ(probe_symmetric_ode(oscillator_equation(w, q), 0, Eigen::Matrix2d::Identity(), 2).scheme, OdeScheme::Bdf);
  // A stiff pair of decays (rates 1 and 1000): BDF whatever the window.
  SymmetricMatrixOde stiff;
  stiff.n = 2;
  stiff.F = [](double, MatrixRef F) { F << -1, 0, 0, -1000; };
  EXPECT_EQ(probe_symmetric_ode(stiff, 0, Eigen::Matrix2d::Identity(), 100).scheme, OdeScheme::Bdf);
  // A strongly damped oscillation (decay 200 > 4 x frequency 20): BDF.
  SymmetricMatrixOde damped;
  damped.n = 2;
  damped.F = [](double, MatrixRef F) { F << 0, 1, -400, -400; };
  EXPECT_EQ(probe_symmetric_ode(damped, 0, Eigen::Matrix2d::Identity(), 100).scheme, OdeScheme::Bdf);
}

TEST(ExplicitRk, OscillatorCovarianceForwardAndBackwardMatchTheClosedForm) {
  const double w = 20, q = 3, t1 = 20;
  OdeOptions o;
  o.scheme = OdeScheme::RungeKutta;
  o.rtol = 1e-10;
  o.atol = 1e-12;
  SymmetricMatrixOdeSolver solver(oscillator_equation(w, q), o);
  solver.start(0, Eigen::Matrix2d::Identity());
  Eigen::MatrixXd P;
  for (double t : {0.37, 5.0, 12.25, t1}) {
    solver.advance(t, P);
    // Local errors of 1e-10 summed over up to 400 rad of oscillation.
    EXPECT_LT(relative_gap(P, oscillator_covariance(w, q, t)), 5e-8) << "t = " << t;
  }
  EXPECT_EQ(solver.time(), t1);
  EXPECT_GT(solver.stats().steps, 100);
  // Backward from the closed form at t1 to the identity at 0, through a breakpoint at 7.
  SymmetricMatrixOde eq = oscillator_equation(w, q);
  eq.breakpoints = {7.0};
  SymmetricMatrixOdeSolver back(eq, o);
  back.start(t1, oscillator_covariance(w, q, t1));
  back.advance(7.0, P);
  EXPECT_LT(relative_gap(P, oscillator_covariance(w, q, 7.0)), 5e-8);
  back.advance(0.0, P);
  // |P(t1)| is about 30: the identity is what is left after the noise's share is taken off.
  EXPECT_LT(relative_gap(P, Eigen::MatrixXd(Eigen::Matrix2d::Identity())), 1e-6);
}

TEST(ExplicitRk, ANonFiniteValueIsANamedNumericalErrorAndTheStepBudgetHolds) {
  OdeOptions o;
  o.scheme = OdeScheme::RungeKutta;
  SymmetricMatrixOde blowup;
  blowup.n = 1;
  blowup.F = [](double, MatrixRef F) { F(0, 0) = 0; };
  blowup.quadratic_rank = 1;  // P' = P^2 from P = 1 leaves the doubles at t = 1
  blowup.G = [](double, MatrixRef G) { G(0, 0) = 1; };
  blowup.W = [](double, MatrixRef W) { W(0, 0) = -1; };
  blowup.symbol = "P";
  SymmetricMatrixOdeSolver s(blowup, o);
  s.start(0, Eigen::MatrixXd::Ones(1, 1));
  Eigen::MatrixXd P;
  EXPECT_THROW(s.advance(2.0, P), NumericalError);

  o.max_steps = 50;
  SymmetricMatrixOdeSolver short_budget(oscillator_equation(20, 3), o);
  short_budget.start(0, Eigen::Matrix2d::Identity());
  try {
    short_budget.advance(20, P);
    FAIL() << "the step budget was not enforced";
  } catch (const NumericalError& e) {
    EXPECT_NE(std::string(e.what()).find("max_steps"), std::string::npos) << e.what();
  }
}
