// Minimum-energy transfer: the designed input, replayed by an independent simulation (scipy's
// solve_ivp on a cubic spline of the samples, tests/reference/gramian_replay.py), reaches xf;
// its energy matches the double integrator's closed form; a rank-deficient pair fails as a
// numerical error naming the weakest direction.
#include <gtest/gtest.h>

#include <cmath>
#include <nlohmann/json.hpp>

#include "gramian/gramian_sweep.hpp"
#include "gramian/transfer.hpp"
#include "model/time_grid.hpp"
#include "io/csv.hpp"
#include "io/errors.hpp"
#include "model/function_system.hpp"
#include "support.hpp"

namespace {

using ordex::GramianKind;

// The system of tests/reference/gramian_tv_system.py.
ordex::FunctionSystem tv_system() {
  ordex::FunctionSystem sys({"x1", "x2", "x3"});
  sys.set_A([](double t, ordex::MatrixRef a) {
    a << 0, 1, 0, -(2 + 0.5 * std::cos(1.3 * t)), -0.2, 0.3 * std::sin(t), 0.1, 0, -0.5 + 0.2 * std::cos(0.7 * t);
  });
  sys.set_B({"u"}, [](double t, ordex::MatrixRef b) { b << 0, 1 + 0.3 * std::sin(0.9 * t), 0.2 * std::cos(t); });
  return sys;
}

ordex::PropagationOptions tight() {
  ordex::PropagationOptions o;
  o.rtol = 1e-11;
  o.atol = 1e-13;
  return o;
}

TEST(GramianTransfer, ReplayedByScipyReachesTheTarget) {
  auto sys = tv_system();
  const auto times = ordex::linspace(0.3, 6.3, 601);
  auto sweep = ordex::sweep_gramians(sys, GramianKind::Controllability, times, tight(), 2);
  ordex::TransferOptions t;
  t.x0 = Eigen::Vector3d(0.5, -0.2, 0.1);
  t.xf = Eigen::Vector3d(-0.3, 0.4, 0.25);
  auto r = ordex::design_transfer(sys, sweep, t);
  // The module's own replays: the input law, and the sampled history linearly interpolated.
  EXPECT_LT(r.final_error, 1e-7);
  EXPECT_LT(r.final_error_sampled, 1e-3);
  EXPECT_NEAR(r.energy_replayed, r.energy, 1e-7 * r.energy);
  // The free motion is not the target: the input does real work.
  EXPECT_GT((r.free_final - t.xf).norm(), 0.1);

  // Outside check: scipy integrates the plant with a cubic spline through the samples.
  const std::string csv = ordex_test::temp_dir() + "/gramian_transfer_u.csv";
  ordex::CsvWriter w(csv, {"t", "u"});
  for (std::size_t k = 0; k < r.times.size(); ++k) w.row(r.times[k], r.inputs.row(k).transpose());
  w.commit();
  auto py = ordex_test::run_python("gramian_replay.py", csv + " 0.5,-0.2,0.1");
  ASSERT_EQ(py.exit_code, 0) << py.err;
  auto j = nlohmann::json::parse(py.out);
  Eigen::Vector3d xf_scipy(j["x_final"][0].get<double>(), j["x_final"][1].get<double>(), j["x_final"][2].get<double>());
  EXPECT_LT((xf_scipy - t.xf).norm(), 1e-6) << xf_scipy.transpose();
  EXPECT_NEAR(j["energy"].get<double>(), r.energy, 1e-6 * r.energy);  // Simpson on the samples
}

TEST(GramianTransfer, DoubleIntegratorEnergyClosedForm) {
  // x'' = u from rest at 0 to rest at 1 in T: u = 6/T^2 - 12 t/T^3, energy 12/T^3 and peak
  // 6/T^2 (closed form of the minimum-energy rest-to-rest move).
  ordex::FunctionSystem sys({"p", "v"});
  sys.set_A([](double, ordex::MatrixRef a) { a << 0, 1, 0, 0; });
  sys.set_B({"f"}, [](double, ordex::MatrixRef b) { b << 0, 1; });
  const double T = 3.0;
  auto sweep = ordex::sweep_gramians(sys, GramianKind::Controllability, ordex::linspace(0, T, 31), tight(), 1);
  ordex::TransferOptions t;
  t.x0 = Eigen::Vector2d(0, 0);
  t.xf = Eigen::Vector2d(1, 0);
  auto r = ordex::design_transfer(sys, sweep, t);
  EXPECT_NEAR(r.energy, 12 / (T * T * T), 1e-10);
  EXPECT_NEAR(r.peak_input, 6 / (T * T), 1e-10);
  for (std::size_t k = 0; k < r.times.size(); ++k)
    EXPECT_NEAR(r.inputs(k, 0), 6 / (T * T) - 12 * r.times[k] / (T * T * T), 1e-10);
  EXPECT_LT(r.final_error, 1e-9);
  // The linear interpolation of a linear input is exact.
  EXPECT_LT(r.final_error_sampled, 1e-8);  // replay rtol 1e-10
}

TEST(GramianTransfer, SingularGramianNamesTheWeakestDirection) {
  ordex::FunctionSystem sys({"a", "b", "c"});
  sys.set_A([](double t, ordex::MatrixRef m) { m << -0.3, 1 + 0.2 * std::sin(t), 0.4, -1, -0.1, 0, 0, 0, -0.5; });
  sys.set_B({"u"}, [](double, ordex::MatrixRef b) { b << 0, 1, 0; });
  auto sweep = ordex::sweep_gramians(sys, GramianKind::Controllability, ordex::linspace(0, 4, 11), tight(), 2);
  ordex::TransferOptions t;
  t.x0 = Eigen::Vector3d(0, 0, 0);
  t.xf = Eigen::Vector3d(1, 0, 0);
  try {
    ordex::design_transfer(sys, sweep, t);
    FAIL() << "a rank-2 Gramian was inverted";
  } catch (const ordex::NumericalError& e) {
    const std::string msg = e.what();
    EXPECT_NE(msg.find("c 1"), std::string::npos) << msg;  // the unreachable state c
    EXPECT_NE(msg.find("rank 2 of 3"), std::string::npos) << msg;
    EXPECT_NE(msg.find("eigenvalue"), std::string::npos) << msg;
  }
  t.xf = Eigen::Vector2d(1, 0);
  EXPECT_THROW(ordex::design_transfer(sys, sweep, t), ordex::InputError);
}

}  // namespace
