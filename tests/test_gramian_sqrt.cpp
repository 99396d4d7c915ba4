// Square-root Gramians and rank verdicts: a tiny eigenvalue known in closed form, a lumped chain
// whose masses burn down (invented numbers) over short and long windows by both routes, a
// 40-state chain, verdicts under a change of units, and a verdict double precision cannot decide.
#include <gtest/gtest.h>

#include <cmath>
#include <nlohmann/json.hpp>

#include "gramian/gramian.hpp"
#include "gramian/spectrum.hpp"
#include "model/function_system.hpp"
#include "support.hpp"

namespace {

using namespace ordex;

GramianOptions opts(GramianKind kind, GramianRoute route, double rtol = 1e-11) {
  GramianOptions o;
  o.kind = kind;
  o.route = route;
  o.propagation.rtol = rtol;
  o.propagation.atol = rtol * 1e-3;
  return o;
}

TEST(GramianSqrt, DoubleIntegratorTinyEigenvalueToRelativeAccuracy) {
  // x'' = u over [0, T]: W_r = [[T^3/3, T^2/2], [T^2/2, T]] (W_c the same with the off-diagonal
  // negated). det = T^4/12, so lambda_min = det / lambda_max exactly, with lambda_max from the
  // larger root (no cancellation); for small T lambda_min ~ T^3/12. With T = 1e-6 the two
  // eigenvalues are 12 orders apart: an explicit W resolves lambda_min only to about
  // u lambda_max / lambda_min ~ 3e-4; the factor resolves it to double precision.
  FunctionSystem s({"x", "v"});
  s.set_A([](double, MatrixRef a) { a << 0, 1, 0, 0; });
  s.set_B({"u"}, [](double, MatrixRef b) { b << 0, 1; });
  for (double T : {1e-6, 1e-3, 1.0}) {
    const double tr = T * T * T / 3 + T, det = T * T * T * T / 12;
    const double lmax = 0.5 * (tr + std::sqrt(tr * tr - 4 * det));
    const double lmin = det / lmax;
    for (GramianKind kind : {GramianKind::Reachability, GramianKind::Controllability}) {
      for (int grid : {1, 7}) {
        std::vector<double> times;
        for (int k = 0; k <= grid; ++k) times.push_back(k == grid ? T : T * k / grid);
        const GramianResult r = compute_gramian(s, 0, T, opts(kind, GramianRoute::Block), times);
        const GramianSpectrum sp = analyze_factor(r.factor);
        EXPECT_NEAR(sp.eigenvalues[0], lmin, 1e-6 * lmin) << "T " << T << " grid " << grid;
        EXPECT_NEAR(sp.eigenvalues[1], lmax, 1e-9 * lmax);
        EXPECT_EQ(sp.verdict.status, RankStatus::FullRank);
      }
    }
    if (T >= 1e-3) {  // the Lyapunov route, on windows its absolute tolerance can resolve
      GramianOptions o = opts(GramianKind::Reachability, GramianRoute::Lyapunov, 1e-12);
      o.propagation.atol = 1e-12 * lmin;
      const GramianSpectrum sp = analyze_factor(compute_gramian(s, 0, T, o).factor);
      EXPECT_NEAR(sp.eigenvalues[0], lmin, 1e-6 * lmin) << "T " << T;
    }
  }
}

/// Two (or more) point masses in a line joined by springs, burning down linearly
/// m_i(t) = m0_i (1 - r t), a force on the first mass. States (x_1, v_1, ..., x_n, v_n); POS_UNIT
/// scales the positions (1e3: millimetres instead of metres).
FunctionSystem chain(int masses, double pos_unit = 1.0, double k = 40) {
  std::vector<std::string> names;
  for (int i = 0; i < masses; ++i) {
    names.push_back("x" + std::to_string(i + 1));
    names.push_back("v" + std::to_string(i + 1));
  }
  FunctionSystem s(names, "burning chain");
  const double r = 1.0 / 62;
  auto mass = [masses](int i) { return masses == 2 ? (i == 0 ? 2.0 : 1.5) : 1.0 + 0.5 * std::sin(1.0 + i); };
  s.set_A([=](double t, MatrixRef a) {
    a.setZero();
    for (int i = 0; i < masses; ++i) {
      const double m = mass(i) * (1 - r * t);
      a(2 * i, 2 * i + 1) = pos_unit;
      if (i > 0) {
        a(2 * i + 1, 2 * i) -= k / m;
        a(2 * i + 1, 2 * i - 2) += k / m;
      }
      if (i + 1 < masses) {
        a(2 * i + 1, 2 * i) -= k / m;
        a(2 * i + 1, 2 * i + 2) += k / m;
      }
    }
    // positions in units of 1/pos_unit: x' = pos_unit v, and v' sees x / pos_unit
    for (int i = 0; i < masses; ++i)
      for (int j = 0; j < masses; ++j) a(2 * i + 1, 2 * j) /= pos_unit;
  });
  s.set_B({"f"}, [=](double t, MatrixRef b) {
    b.setZero();
    b(1, 0) = 1.0 / (mass(0) * (1 - r * t));
  });
  return s;
}

std::vector<double> grid(double t1, int n) {
  std::vector<double> g;
  for (int k = 0; k <= n; ++k) g.push_back(k == n ? t1 : t1 * k / n);
  return g;
}

TEST(GramianSqrt, BurningChainStaysFullRankAndSemidefiniteAsTheWindowGrows) {
  FunctionSystem s = chain(2);
  // Short window against scipy (solve_ivp on the Lyapunov equation, DOP853 rtol 1e-12).
  {
    nlohmann::json in = {{"n_masses", 2}, {"k", 40}, {"m0", {2.0, 1.5}}, {"r", 1.0 / 62}, {"T", 10}};
    auto py = ordex_test::run_python("numbers_gramian_quadrature.py", "'" + in.dump() + "'");
    ASSERT_EQ(py.exit_code, 0) << py.err;
    const auto j = nlohmann::json::parse(py.out)["reach"];
    Eigen::MatrixXd ref(4, 4);
    for (int a = 0; a < 4; ++a)
      for (int b = 0; b < 4; ++b) ref(a, b) = j[a][b].get<double>();
    for (GramianRoute route : {GramianRoute::Block, GramianRoute::Lyapunov}) {
      const GramianResult r = compute_gramian(s, 0, 10, opts(GramianKind::Reachability, route), grid(10, 20));
      EXPECT_LT((r.gramian - ref).norm() / ref.norm(), 1e-7) << route_name(route);
    }
  }
  // Controllability Gramians W_c(0, T) for T = 10, 20, ..., 60: every eigenvalue is
  // non-decreasing in T (W_c(0, T2) - W_c(0, T1) is itself a Gramian), all are >= 0, and the
  // verdict stays "full rank".
  for (GramianRoute route : {GramianRoute::Block, GramianRoute::Lyapunov}) {
    Eigen::VectorXd prev;
    for (int T = 10; T <= 60; T += 10) {
      const GramianResult r = compute_gramian(s, 0, T, opts(GramianKind::Controllability, route), grid(T, 2 * T));
      const GramianSpectrum sp = analyze_factor(r.factor);
      EXPECT_GE(sp.eigenvalues.minCoeff(), 0.0);
      EXPECT_EQ(sp.verdict.status, RankStatus::FullRank)
          << route_name(route) << " T " << T << ": " << sp.verdict.reason << "\n" << sp.eigenvalues.transpose();
      if (prev.size()) {
        for (int i = 0; i < 4; ++i)
          EXPECT_GE(sp.eigenvalues[i], prev[i] * (1 - 1e-6)) << route_name(route) << " T " << T << " i " << i;
      }
      prev = sp.eigenvalues;
    }
  }
}

TEST(GramianSqrt, FortyStateChainIsSemidefiniteByBothRoutes) {
  FunctionSystem s = chain(20, 1.0, 4.0);  // softer springs keep the 40-state run short
  for (GramianRoute route : {GramianRoute::Block, GramianRoute::Lyapunov}) {
    const GramianResult r = compute_gramian(s, 0, 60, opts(GramianKind::Controllability, route, 1e-9), grid(60, 60));
    const GramianSpectrum sp = analyze_factor(r.factor);
    EXPECT_GE(sp.eigenvalues.minCoeff(), 0.0) << route_name(route);
    EXPECT_EQ(r.gramian, r.gramian.transpose());
    // Semidefinite as a matrix too: its Cholesky with a tiny shift succeeds.
    Eigen::LLT<Eigen::MatrixXd> llt(r.gramian + 1e-12 * r.gramian.diagonal().maxCoeff() * Eigen::MatrixXd::Identity(40, 40));
    EXPECT_EQ(llt.info(), Eigen::Success) << route_name(route);
    // Whatever the verdict, it is stated, never a bare guess: undetermined carries its reason.
    if (sp.verdict.status == RankStatus::Undetermined) EXPECT_FALSE(sp.verdict.reason.empty());
  }
}

TEST(GramianSqrt, VerdictDoesNotFlipWithUnits) {
  // The same chain with positions in millimetres: W changes by S W S, S = diag(1e3, 1, 1e3, 1).
  FunctionSystem metres = chain(2), millimetres = chain(2, 1e3);
  const GramianOptions o = opts(GramianKind::Controllability, GramianRoute::Block);
  const GramianResult wm = compute_gramian(metres, 0, 60, o, grid(60, 120));
  const GramianResult wmm = compute_gramian(millimetres, 0, 60, o, grid(60, 120));
  Eigen::Vector4d units(1e3, 1, 1e3, 1);
  // The Gramians themselves are related by the change of units (a check on both runs).
  EXPECT_LT((wmm.gramian - units.asDiagonal() * wm.gramian * units.asDiagonal()).norm() / wmm.gramian.norm(), 1e-6);
  for (double tol : {1e-10, 1e-6, 1e-3}) {
    // Balanced: the verdict is the same in metres and in millimetres.
    const GramianSpectrum a = analyze_factor(wm.factor, tol), b = analyze_factor(wmm.factor, tol);
    EXPECT_EQ(a.verdict.status, b.verdict.status) << tol;
    EXPECT_EQ(a.rank, b.rank) << tol;
    for (int i = 0; i < 4; ++i)
      EXPECT_NEAR(a.verdict.scaled_eigenvalues[i], b.verdict.scaled_eigenvalues[i], 1e-6 * a.verdict.scaled_eigenvalues[3]);
    // Units given: millimetres judged in units of 1e3 is metres judged as they are.
    StateScaling none;
    none.mode = ScalingMode::None;
    StateScaling mm;
    mm.mode = ScalingMode::Units;
    mm.units = units;
    const GramianSpectrum c = analyze_factor(wm.factor, tol, none), d = analyze_factor(wmm.factor, tol, mm);
    EXPECT_EQ(c.verdict.status, d.verdict.status) << tol;
    EXPECT_EQ(c.rank, d.rank) << tol;
  }
}

TEST(GramianSqrt, RankThatDoublePrecisionCannotDecideIsUndetermined) {
  // A = 0, B = [1; 1]: W = T [[1, 1], [1, 1]], rank 1 exactly, missing direction (1, -1)/sqrt(2)
  // (not a zero row: only a combination of states is unreachable).
  FunctionSystem s({"p", "q"});
  s.set_A([](double, MatrixRef a) { a.setZero(); });
  s.set_B({"u"}, [](double, MatrixRef b) { b << 1, 1; });
  const GramianResult r = compute_gramian(s, 0, 2, opts(GramianKind::Controllability, GramianRoute::Block), grid(2, 5));
  const GramianSpectrum deficient = analyze_factor(r.factor);
  EXPECT_EQ(deficient.verdict.status, RankStatus::RankDeficient);
  EXPECT_EQ(deficient.rank, 1);
  EXPECT_NEAR(std::abs(deficient.missing_directions(0, 0)), std::sqrt(0.5), 1e-12);
  EXPECT_NEAR(deficient.missing_directions(0, 0), -deficient.missing_directions(1, 0), 1e-12);
  // A threshold below the factor's round-off floor: no verdict can be given.
  const GramianSpectrum unsure = analyze_factor(r.factor, 1e-34);
  EXPECT_EQ(unsure.verdict.status, RankStatus::Undetermined);
  EXPECT_EQ(unsure.verdict.rank_low, 1);
  EXPECT_EQ(unsure.verdict.rank_high, 2);
  EXPECT_FALSE(unsure.full_rank);
  EXPECT_NE(unsure.verdict.reason.find("round-off floor"), std::string::npos) << unsure.verdict.reason;
  EXPECT_NE(unsure.verdict.remedy.find("shorter window"), std::string::npos) << unsure.verdict.remedy;
}

TEST(GramianSqrt, IndefiniteInputIsProjectedAndItsErrorCarried) {
  // An explicit W with a negative eigenvalue (as an ODE route may return): the factor drops it,
  // the product is semidefinite, and its size becomes the route's error bound in the verdict.
  Eigen::Matrix2d w;
  w << 1.0, 1.0, 1.0, 1.0 - 1e-7;  // eigenvalues about 2 and -5e-8
  const GramianFactor f = psd_factor(w);
  EXPECT_GE(Eigen::SelfAdjointEigenSolver<Eigen::Matrix2d>(f.product()).eigenvalues().minCoeff(), -1e-15);
  EXPECT_NEAR(f.graded_error, 5e-8, 1e-9);
  const GramianSpectrum sp = analyze_factor(f, 1e-10);
  EXPECT_EQ(sp.verdict.status, RankStatus::Undetermined);
  EXPECT_NE(sp.verdict.reason.find("route"), std::string::npos) << sp.verdict.reason;
}

}  // namespace
