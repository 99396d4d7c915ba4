// Undeclared discontinuities: switching functions found in the expressions, their times located,
// and the square-wave oscillator without declared breakpoints against a product of exponentials
// (scipy.linalg.expm, tests/reference/numbers_piecewise_expm.py).
#include <gtest/gtest.h>

#include <cmath>
#include <functional>
#include <nlohmann/json.hpp>

#include "model/expression_switching.hpp"
#include "model/model_file.hpp"
#include "propagation/propagator.hpp"
#include "response/discretize.hpp"
#include "riccati/regulator.hpp"
#include "support.hpp"

namespace {

using namespace ordex;

TEST(NumbersSwitching, NonSmoothConstructsYieldTheirSwitchingFunctions) {
  auto f = switching_functions("t < 1 ? a : b", "m: k");
  ASSERT_EQ(f.size(), 1u);
  EXPECT_EQ(f[0].kind, SwitchKind::Sign);
  EXPECT_EQ(f[0].text, "(t)-(1)");
  f = switching_functions("2*abs(sin(t)) + floor(t/2) - max(t, 2*t - 1, 3)", "m: k");
  ASSERT_EQ(f.size(), 5u);
  EXPECT_EQ(f[0].text, "sin(t)");
  EXPECT_EQ(f[1].kind, SwitchKind::Floor);
  EXPECT_EQ(f[1].text, "t/2");
  EXPECT_EQ(f[2].text, "(t)-(2*t - 1)");
  EXPECT_EQ(f[4].text, "(2*t - 1)-(3)");
  f = switching_functions("(sin(3*t) >= 0) * 4 + (t && 2)", "m: k");
  ASSERT_EQ(f.size(), 3u);  // the comparison, and both operands of && tested against zero
  EXPECT_EQ(f[0].text, "(sin(3*t))-(0)");
  EXPECT_EQ(f[1].kind, SwitchKind::Nonzero);
  EXPECT_EQ(f[1].text, "t");
  EXPECT_TRUE(switching_functions("sin(t)^2 - -3*exp(-t)", "m: k").empty());
}

struct SquareWave {
  double w = 2.3, k1 = 4.0, k2 = 0.6, T = 7.0;
};

std::string write_model(const std::string& name, const std::string& stiffness) {
  const std::string path = ordex_test::temp_dir() + "/" + name + ".toml";
  ordex_test::write_file(path, "[system]\nstates = [\"x\", \"v\"]\n[parameters]\nw = 2.3\nk1 = 4.0\nk2 = 0.6\n"
                               "[matrices]\nA = [[0, 1], [\"-(" + stiffness + ")\", 0]]\n");
  return path;
}

/// scipy: the product of exponentials over the constant pieces between the switching times.
Eigen::MatrixXd reference_phi(const SquareWave& q, const std::vector<double>& cuts, const std::vector<double>& k) {
  nlohmann::json in;
  in["pieces"] = nlohmann::json::array();
  for (std::size_t p = 0; p + 1 < cuts.size(); ++p)
    in["pieces"].push_back({{"A", {{0.0, 1.0}, {-k[p], 0.0}}}, {"from", cuts[p]}, {"to", cuts[p + 1]}});
  auto r = ordex_test::run_python("numbers_piecewise_expm.py", "'" + in.dump() + "'");
  EXPECT_EQ(r.exit_code, 0) << r.err;
  auto j = nlohmann::json::parse(r.out)["phi"];
  Eigen::MatrixXd m(2, 2);
  for (int a = 0; a < 2; ++a)
    for (int b = 0; b < 2; ++b) m(a, b) = j[a][b].get<double>();
  (void)q;
  return m;
}

TEST(NumbersSwitching, SquareWaveWithoutBreakpointsMatchesProductOfExponentials) {
  const SquareWave q;
  // The stiffness switches where sin(w t) changes sign: t = m pi / w (exact, in closed form).
  std::vector<double> cuts{0.0}, k;
  for (int m = 1; m * M_PI / q.w < q.T; ++m) cuts.push_back(m * M_PI / q.w);
  cuts.push_back(q.T);
  for (std::size_t p = 0; p + 1 < cuts.size(); ++p) k.push_back(p % 2 == 0 ? q.k1 : q.k2);
  const Eigen::MatrixXd ref = reference_phi(q, cuts, k);
  PropagationOptions o;
  o.rtol = 1e-12;
  o.atol = 1e-14;
  for (const std::string& form : {std::string("sin(w*t) >= 0 ? k1 : k2"),
                                  // the same wave through floor: k1 on even half-periods
                                  std::string("k2 + (k1 - k2)*(1 - (floor(w*t/pi) - 2*floor(w*t/(2*pi))))")}) {
    auto sys = load_model(write_model("square", form));
    Generator g = state_generator(*sys, 0, q.T);
    ASSERT_EQ(g.breakpoints.size(), cuts.size() - 2) << form;
    for (std::size_t i = 0; i + 2 < cuts.size(); ++i) EXPECT_NEAR(g.breakpoints[i], cuts[i + 1], 1e-14) << form;
    EXPECT_TRUE(g.notes.empty());
    Propagator p(std::move(g), o);
    const Eigen::MatrixXd phi = p.transition(0, q.T);
    EXPECT_LT((phi - ref).cwiseAbs().maxCoeff(), 1e-9) << form << "\n" << phi << "\n" << ref;
  }
}

TEST(NumbersSwitching, KinksOfAbsMinMaxAndTablesAreBreakpoints) {
  auto sys = load_model(write_model("kinks", "1 + abs(t - 1.25) + max(0.5, t - 3)"));
  Generator g = state_generator(*sys, 0, 5);
  ASSERT_EQ(g.breakpoints.size(), 2u);
  EXPECT_EQ(g.breakpoints[0], 1.25);
  EXPECT_NEAR(g.breakpoints[1], 3.5, 1e-15);
  // Outside the window nothing is added; a parameter-only comparison never switches.
  EXPECT_TRUE(state_generator(*load_model(write_model("none", "k1 > k2 ? 1 : 2")), 0, 5).breakpoints.empty());
}

TEST(NumbersSwitching, UnlocatableSwitchingTimesAreReportedByEntry) {
  // sqrt(t - 1) cannot be evaluated before t = 1: the search cannot follow its sign there.
  auto sys = load_model(write_model("sqrt", "sqrt(t - 1) > 0.5 ? k1 : k2"));
  Generator g = state_generator(*sys, 0, 3);
  ASSERT_EQ(g.notes.size(), 1u);
  EXPECT_NE(g.notes[0].find("matrices.A[2][1]"), std::string::npos) << g.notes[0];
  EXPECT_NE(g.notes[0].find("not located"), std::string::npos) << g.notes[0];
}

/// The square wave with an input on the velocity (B = [0; 1]) and no declared breakpoints.
std::string write_forced_model(const std::string& name) {
  const std::string path = ordex_test::temp_dir() + "/" + name + ".toml";
  ordex_test::write_file(path, "[system]\nstates = [\"x\", \"v\"]\ninputs = [\"f\"]\n"
                               "[parameters]\nw = 2.3\nk1 = 4.0\nk2 = 0.6\n"
                               "[matrices]\nA = [[0, 1], [\"-(sin(w*t) >= 0 ? k1 : k2)\", 0]]\nB = [[0], [1]]\n");
  return path;
}

/// The constant pieces of the square wave over [0, T]: switching times and stiffnesses.
void square_wave_pieces(const SquareWave& q, double T, std::vector<double>& cuts, std::vector<double>& k) {
  cuts = {0.0};
  for (int m = 1; m * M_PI / q.w < T; ++m) cuts.push_back(m * M_PI / q.w);
  cuts.push_back(T);
  k.clear();
  for (std::size_t p = 0; p + 1 < cuts.size(); ++p) k.push_back(p % 2 == 0 ? q.k1 : q.k2);
}

/// scipy: the product of exponentials of the pieces' matrices MAKE(k) over CUTS.
Eigen::MatrixXd piecewise_product(const std::vector<double>& cuts, const std::vector<double>& k,
                                  const std::function<Eigen::MatrixXd(double)>& make) {
  nlohmann::json in;
  in["pieces"] = nlohmann::json::array();
  for (std::size_t p = 0; p + 1 < cuts.size(); ++p) {
    const Eigen::MatrixXd a = make(k[p]);
    nlohmann::json rows = nlohmann::json::array();
    for (int i = 0; i < a.rows(); ++i) {
      nlohmann::json row = nlohmann::json::array();
      for (int j = 0; j < a.cols(); ++j) row.push_back(a(i, j));
      rows.push_back(row);
    }
    in["pieces"].push_back({{"A", rows}, {"from", cuts[p]}, {"to", cuts[p + 1]}});
  }
  auto r = ordex_test::run_python("numbers_piecewise_expm.py", "'" + in.dump() + "'");
  EXPECT_EQ(r.exit_code, 0) << r.err;
  const auto j = nlohmann::json::parse(r.out)["phi"];
  Eigen::MatrixXd m(j.size(), j[0].size());
  for (int a = 0; a < m.rows(); ++a)
    for (int b = 0; b < m.cols(); ++b) m(a, b) = j[a][b].get<double>();
  return m;
}

TEST(NumbersSwitching, DiscreteModelLandsOnUndeclaredSwitchingTimes) {
  // One interval [0, T] across three switches: the zero-order-hold step is the block
  // exponential [[A, B], [0, 0]] over the pieces (Van Loan), from scipy.
  const SquareWave q;
  const double T = 3.5;
  std::vector<double> cuts, k;
  square_wave_pieces(q, T, cuts, k);
  const Eigen::MatrixXd ref = piecewise_product(cuts, k, [](double kk) {
    Eigen::MatrixXd g = Eigen::MatrixXd::Zero(3, 3);
    g(0, 1) = 1;
    g(1, 0) = -kk;
    g(1, 2) = 1;
    return g;
  });
  auto sys = load_model(write_forced_model("square_forced"));
  DiscretizeOptions o;
  o.propagation.rtol = 1e-12;
  o.propagation.atol = 1e-14;
  const DiscretizeReport r = discretize(*sys, std::vector<double>{0.0, T}, o);
  ASSERT_EQ(r.model.steps.size(), 1u);
  EXPECT_LT((r.model.steps[0].phi - ref.topLeftCorner(2, 2)).cwiseAbs().maxCoeff(), 1e-9) << r.model.steps[0].phi;
  EXPECT_LT((r.model.steps[0].gamma0 - ref.topRightCorner(2, 1)).cwiseAbs().maxCoeff(), 1e-9);
}

TEST(NumbersSwitching, RegulatorLandsOnUndeclaredSwitchingTimes) {
  // P(t0) of the finite-horizon LQR (Q = I, R = 1, Qf = 0) from the Hamiltonian's transition
  // over the constant pieces (scipy): [X; Y](t0) = Psi(T, t0)^-1 [I; 0], P(t0) = Y X^-1
  // (Kalman 1960; the linear-fractional form of the Riccati solution).
  const SquareWave q;
  const double T = 3.0;
  std::vector<double> cuts, k;
  square_wave_pieces(q, T, cuts, k);
  const Eigen::MatrixXd psi = piecewise_product(cuts, k, [](double kk) {
    Eigen::MatrixXd a(2, 2), h(4, 4);
    a << 0, 1, -kk, 0;
    Eigen::MatrixXd bb = Eigen::MatrixXd::Zero(2, 2);
    bb(1, 1) = 1;  // B R^-1 B'
    h << a, -bb, -Eigen::MatrixXd::Identity(2, 2), -a.transpose();
    return h;
  });
  Eigen::MatrixXd end(4, 2);
  end << Eigen::MatrixXd::Identity(2, 2), Eigen::MatrixXd::Zero(2, 2);
  const Eigen::MatrixXd xy = psi.fullPivLu().solve(end);
  const Eigen::MatrixXd P0 = xy.bottomRows(2) * xy.topRows(2).inverse();
  auto sys = load_model(write_forced_model("square_regulated"));
  for (RiccatiSolver solver : {RiccatiSolver::RiccatiOde, RiccatiSolver::Hamiltonian}) {
    RegulatorOptions o;
    o.riccati.solver = solver;
    o.riccati.propagation.rtol = 1e-11;
    o.riccati.propagation.atol = 1e-13;
    o.check_closed_loop = false;
    const RegulatorReport r = regulate(*sys, 0, T, o);
    EXPECT_LT((r.P0 - P0).cwiseAbs().maxCoeff(), 1e-7 * P0.cwiseAbs().maxCoeff()) << r.P0 << "\n" << P0;
  }
}

}  // namespace
