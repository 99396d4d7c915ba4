// Time-varying Gramians against the Lyapunov differential equation solved by scipy's solve_ivp
// (tests/reference/gramian_lyapunov_ivp.py, same system as tests/reference/gramian_tv_system.py),
// the two routes against each other, and a rank-deficient pair whose missing direction is found.
#include <gtest/gtest.h>

#include <cmath>
#include <nlohmann/json.hpp>

#include "gramian/gramian.hpp"
#include "gramian/gramian_sweep.hpp"
#include "gramian/spectrum.hpp"
#include "model/time_grid.hpp"
#include "io/errors.hpp"
#include "model/function_system.hpp"
#include "support.hpp"

namespace {

using ordex::GramianKind;
using ordex::GramianRoute;

// The system of tests/reference/gramian_tv_system.py.
ordex::FunctionSystem tv_system() {
  ordex::FunctionSystem sys({"x1", "x2", "x3"});
  sys.set_A([](double t, ordex::MatrixRef a) {
    a << 0, 1, 0, -(2 + 0.5 * std::cos(1.3 * t)), -0.2, 0.3 * std::sin(t), 0.1, 0, -0.5 + 0.2 * std::cos(0.7 * t);
  });
  sys.set_B({"u"}, [](double t, ordex::MatrixRef b) { b << 0, 1 + 0.3 * std::sin(0.9 * t), 0.2 * std::cos(t); });
  sys.set_C({"y"}, [](double t, ordex::MatrixRef c) { c << 1, 0, 0.5 * std::sin(0.4 * t); });
  return sys;
}

Eigen::MatrixXd from_json(const nlohmann::json& j) {
  Eigen::MatrixXd m(j.size(), j[0].size());
  for (std::size_t i = 0; i < j.size(); ++i)
    for (std::size_t k = 0; k < j[i].size(); ++k) m(i, k) = j[i][k].get<double>();
  return m;
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

TEST(GramianTimeVarying, AllKindsMatchScipySolveIvp) {
  auto sys = tv_system();
  auto r = ordex_test::run_python("gramian_lyapunov_ivp.py", "0.3 4.1");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  auto ref = nlohmann::json::parse(r.out);
  const std::pair<GramianKind, const char*> kinds[] = {{GramianKind::Controllability, "controllability"},
                                                       {GramianKind::Reachability, "reachability"},
                                                       {GramianKind::Observability, "observability"}};
  for (const auto& [kind, key] : kinds) {
    const Eigen::MatrixXd expected = from_json(ref[key]);  // scipy solve_ivp DOP853 at rtol 1e-12
    // Block route on a single interval, on a grid, on two threads, with Magnus 4 and CVODE Adams.
    EXPECT_LT(rel_diff(ordex::compute_gramian(sys, 0.3, 4.1, options(kind, GramianRoute::Block)).gramian, expected), 1e-9) << key;
    auto grid_opts = options(kind, GramianRoute::Block, ordex::Method::Magnus4);
    EXPECT_LT(rel_diff(ordex::compute_gramian(sys, 0.3, 4.1, grid_opts, ordex::linspace(0.3, 4.1, 23)).gramian, expected), 1e-9) << key;
    auto adams = options(kind, GramianRoute::Block, ordex::Method::Adams);
    adams.threads = 1;
    EXPECT_LT(rel_diff(ordex::compute_gramian(sys, 0.3, 4.1, adams, ordex::linspace(0.3, 4.1, 5)).gramian, expected), 1e-8) << key;
    // Lyapunov route, Adams and BDF.
    EXPECT_LT(rel_diff(ordex::compute_gramian(sys, 0.3, 4.1, options(kind, GramianRoute::Lyapunov)).gramian, expected), 1e-9) << key;
    EXPECT_LT(rel_diff(ordex::compute_gramian(sys, 0.3, 4.1, options(kind, GramianRoute::Lyapunov, ordex::Method::Bdf)).gramian, expected), 1e-7) << key;
  }
}

TEST(GramianTimeVarying, ReachabilityIsControllabilityTransported) {
  // W_r = Phi(t1, t0) W_c Phi(t1, t0)' (METHODS.md), with Phi from the sweep and the two
  // Gramians from the Lyapunov route (forward and backward integrations, independent).
  auto sys = tv_system();
  auto sw = ordex::sweep_gramians(sys, GramianKind::Controllability, {0.3, 4.1}, options(GramianKind::Controllability, GramianRoute::Block).propagation, 1);
  const Eigen::MatrixXd phi = sw.phi_from_start.back();
  auto wc = ordex::compute_gramian(sys, 0.3, 4.1, options(GramianKind::Controllability, GramianRoute::Lyapunov)).gramian;
  auto wr = ordex::compute_gramian(sys, 0.3, 4.1, options(GramianKind::Reachability, GramianRoute::Lyapunov)).gramian;
  EXPECT_LT(rel_diff(phi * wc * phi.transpose(), wr), 1e-9);
}

TEST(GramianTimeVarying, RankDeficientPairReportsTheMissingDirection) {
  // x3 is driven by neither the input nor the other states (row 3 of A and B zero but its own
  // decay), so it is unreachable: rank 2 and the weakest direction is e3 exactly.
  ordex::FunctionSystem sys({"x1", "x2", "x3"});
  sys.set_A([](double t, ordex::MatrixRef a) {
    a << -0.3, 1 + 0.2 * std::sin(t), 0.4, -1, -0.1, 0.2 * std::cos(t), 0, 0, -0.5;
  });
  sys.set_B({"u"}, [](double t, ordex::MatrixRef b) { b << 0, 1 + 0.5 * std::cos(2 * t), 0; });
  for (auto kind : {GramianKind::Controllability, GramianKind::Reachability}) {
    for (auto route : {GramianRoute::Block, GramianRoute::Lyapunov}) {
      auto r = ordex::compute_gramian(sys, 0, 5, options(kind, route));
      auto s = ordex::analyze_gramian(r.gramian);
      EXPECT_EQ(s.rank, 2);
      EXPECT_FALSE(s.full_rank);
      EXPECT_NEAR(s.weakest_direction[2], 1.0, 1e-9);
      EXPECT_LT(s.eigenvalues[0], 1e-12 * s.eigenvalues[2]);
      EXPECT_GT(s.eigenvalues[1], 1e-3 * s.eigenvalues[2]);
    }
  }
  // The full pair is reported full rank (the same test must be able to say yes).
  auto full = ordex::analyze_gramian(ordex::compute_gramian(tv_system(), 0, 5, options(GramianKind::Controllability, GramianRoute::Block)).gramian);
  EXPECT_TRUE(full.full_rank);
  EXPECT_EQ(full.rank, 3);
}

TEST(GramianTimeVarying, MissingBOrCIsAnInputError) {
  ordex::FunctionSystem sys({"x1"});
  sys.set_A([](double, ordex::MatrixRef a) { a << -1; });
  EXPECT_THROW(ordex::compute_gramian(sys, 0, 1, options(GramianKind::Controllability, GramianRoute::Block)), ordex::InputError);
  EXPECT_THROW(ordex::compute_gramian(sys, 0, 1, options(GramianKind::Observability, GramianRoute::Lyapunov)), ordex::InputError);
  EXPECT_THROW(ordex::compute_gramian(tv_system(), 1, 0, options(GramianKind::Controllability, GramianRoute::Block)), ordex::InputError);
}

}  // namespace
