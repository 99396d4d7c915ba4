// Sliding-window profile: windows read off one sweep agree with Gramians computed afresh on each
// window by the independent Lyapunov route; an unstable pair, where the difference of running
// Gramians cancels catastrophically, is caught by the check and recomposed, matching scipy's
// Van Loan exponential.
#include <gtest/gtest.h>

#include <Eigen/Eigenvalues>
#include <cmath>
#include <nlohmann/json.hpp>

#include "gramian/gramian.hpp"
#include "gramian/profile.hpp"
#include "io/errors.hpp"
#include "model/function_system.hpp"
#include "support.hpp"

namespace {

using ordex::GramianKind;

ordex::FunctionSystem tv_system() {  // as tests/reference/gramian_tv_system.py
  ordex::FunctionSystem sys({"x1", "x2", "x3"});
  sys.set_A([](double t, ordex::MatrixRef a) {
    a << 0, 1, 0, -(2 + 0.5 * std::cos(1.3 * t)), -0.2, 0.3 * std::sin(t), 0.1, 0, -0.5 + 0.2 * std::cos(0.7 * t);
  });
  sys.set_B({"u"}, [](double t, ordex::MatrixRef b) { b << 0, 1 + 0.3 * std::sin(0.9 * t), 0.2 * std::cos(t); });
  sys.set_C({"y"}, [](double t, ordex::MatrixRef c) { c << 1, 0, 0.5 * std::sin(0.4 * t); });
  return sys;
}

ordex::PropagationOptions tight() {
  ordex::PropagationOptions o;
  o.rtol = 1e-11;
  o.atol = 1e-13;
  return o;
}

Eigen::VectorXd eigenvalues(const Eigen::MatrixXd& w) {
  return Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd>(w, Eigen::EigenvaluesOnly).eigenvalues();
}

TEST(GramianProfile, WindowsMatchFreshLyapunovGramians) {
  auto sys = tv_system();
  ordex::ProfileOptions p;
  p.window_length = 2.0;
  p.stride = 0.25;
  for (auto kind : {GramianKind::Controllability, GramianKind::Reachability, GramianKind::Observability}) {
    auto rep = ordex::sliding_profile(sys, kind, 0, 10, p, tight());
    ASSERT_EQ(rep.windows.size(), 33u);  // starts 0, 0.25, ..., 8
    EXPECT_EQ(rep.recomposed, 0u) << "a stable, well-scaled pair needs no recomposition";
    for (std::size_t w : {0u, 7u, 20u, 32u}) {
      const auto& win = rep.windows[w];
      EXPECT_NEAR(win.t_start, 0.25 * w, 1e-12);
      EXPECT_NEAR(win.t_end, 0.25 * w + 2, 1e-12);
      ordex::GramianOptions g;
      g.kind = kind;
      g.route = ordex::GramianRoute::Lyapunov;
      g.propagation = tight();
      const Eigen::VectorXd ev = eigenvalues(ordex::compute_gramian(sys, win.t_start, win.t_end, g).gramian);
      EXPECT_NEAR(win.spectrum.lambda_min, ev[0], 1e-8 * ev[2]) << ordex::kind_name(kind) << " window " << w;
      EXPECT_NEAR(win.spectrum.lambda_max, ev[2], 1e-8 * ev[2]);
      EXPECT_NEAR(win.spectrum.condition, ev[2] / ev[0], 1e-6 * ev[2] / ev[0]);
      EXPECT_EQ(win.spectrum.rank, 3);
    }
  }
}

TEST(GramianProfile, UnstablePairIsRecomposedAndStillRight) {
  // x' = diag(1.5, -0.4) x + [1; 1] u over [0, 30]: Phi(t_i, 0) grows like exp(1.5 t_i), so
  // F_i (C_j - C_i) F_i' loses every digit late in the horizon.
  ordex::FunctionSystem sys({"a", "b"});
  sys.set_A([](double, ordex::MatrixRef m) { m << 1.5, 0, 0, -0.4; });
  sys.set_B({"u"}, [](double, ordex::MatrixRef b) { b << 1, 1; });
  ordex::ProfileOptions p;
  p.window_length = 1.0;
  p.stride = 0.5;
  auto rep = ordex::sliding_profile(sys, GramianKind::Controllability, 0, 30, p, tight());
  ASSERT_EQ(rep.windows.size(), 59u);
  EXPECT_GT(rep.recomposed, 10u);
  EXPECT_FALSE(rep.windows.back().estimated_error <= p.check_fraction);
  // Every window of a constant pair is the Gramian over [0, 1] (time invariance); scipy's
  // Van Loan exponential gives it (tests/reference/gramian_vanloan.py).
  auto py = ordex_test::run_python("gramian_vanloan.py",
                                   "'{\"A\": [[1.5, 0], [0, -0.4]], \"B\": [[1], [1]], \"T\": 1.0}'");
  ASSERT_EQ(py.exit_code, 0) << py.err;
  auto ref = nlohmann::json::parse(py.out)["controllability"];
  Eigen::Matrix2d wc;
  wc << ref[0][0].get<double>(), ref[0][1].get<double>(), ref[1][0].get<double>(), ref[1][1].get<double>();
  const Eigen::VectorXd ev = eigenvalues(wc);
  std::size_t by_difference = 0;
  for (const auto& w : rep.windows) {
    if (w.recomposed) {  // composed from the window's own steps: engine accuracy
      EXPECT_NEAR(w.spectrum.lambda_min, ev[0], 1e-8 * ev[1]) << "window at " << w.t_start;
      EXPECT_NEAR(w.spectrum.lambda_max, ev[1], 1e-8 * ev[1]);
    } else {  // read off by difference: the error estimate must bound the actual error
      ++by_difference;
      const double actual = std::abs(w.spectrum.lambda_min - ev[0]) / ev[0];
      EXPECT_LE(actual, std::max(w.estimated_error, 1e-8)) << "window at " << w.t_start;
      EXPECT_LE(w.estimated_error, p.check_fraction);
    }
  }
  EXPECT_GT(by_difference, 0u);  // early windows, before the growth, pass the check
}

TEST(GramianProfile, BadWindowsAreInputErrors) {
  auto sys = tv_system();
  ordex::ProfileOptions p;
  p.window_length = 20;
  EXPECT_THROW(ordex::sliding_profile(sys, GramianKind::Controllability, 0, 10, p, tight()), ordex::InputError);
  p.window_length = -1;
  EXPECT_THROW(ordex::sliding_profile(sys, GramianKind::Controllability, 0, 10, p, tight()), ordex::InputError);
  p.window_length = 1;
  p.stride = 1e-9;
  EXPECT_THROW(ordex::sliding_profile(sys, GramianKind::Controllability, 0, 10, p, tight()), ordex::InputError);
}

}  // namespace
