// Covariance analysis of lib/estimation against outside references: the scalar random walk's
// closed-form recursion, the textbook measurement update, a numpy/scipy recursion (Van Loan
// discretization) for a two-state plant with two sensors, and a seeded Monte Carlo of plant and
// filter whose sample error covariance must match P within its chi-square bounds.
#include <gtest/gtest.h>

#include <cmath>
#include <nlohmann/json.hpp>
#include <random>

#include "estimation/estimate.hpp"
#include "job_support.hpp"
#include "model/function_system.hpp"
#include "support.hpp"

using namespace ordex;

namespace {

Sensor sensor(std::vector<std::string> outputs, std::vector<double> times, const Eigen::MatrixXd& R) {
  Sensor s;
  s.outputs = std::move(outputs);
  s.times = std::move(times);
  s.Rn = WeightMatrix::constant(R, "Rn");
  return s;
}

}  // namespace

TEST(CovarianceAnalysis, RandomWalkWithPeriodicFixesFollowsTheScalarRecursion) {
  // x' = w (Qn = q, noise on the state), y = x measured at t = 0, h, 2h, ... with variance R.
  // The scalar discrete Kalman filter (e.g. Gelb, Applied Optimal Estimation, 1974, ch. 4):
  //   P-(k+1) = P+(k) + q h,  P+ = P- R / (P- + R).
  const double q = 0.2, R = 0.5, h = 0.5, p0 = 2.0;
  auto sys = std::make_unique<FunctionSystem>(std::vector<std::string>{"x"});
  sys->set_A([](double, MatrixRef m) { m(0, 0) = 0; });
  sys->set_C({"y"}, [](double, MatrixRef m) { m(0, 0) = 1; });
  NoiseModel n;
  n.Qn = WeightMatrix::constant(Eigen::MatrixXd::Constant(1, 1, q), "Qn");
  n.P0 = Eigen::MatrixXd::Constant(1, 1, p0);
  for (RiccatiSolver route : {RiccatiSolver::RiccatiOde, RiccatiSolver::Hamiltonian}) {
    EstimationOptions o;
    o.noise = n;
    o.solver = route;
    o.samples = 21;  // every 0.25: half of them fall on measurement times
    SensorSchedule s;
    std::vector<double> times;
    for (int k = 0; k <= 10; ++k) times.push_back(k * h);
    s.sensors.push_back(sensor({"y"}, times, Eigen::MatrixXd::Constant(1, 1, R)));
    o.schedule = s;
    const EstimationReport rep = estimate(*sys, 0.0, 5.25, o);
    EXPECT_EQ(rep.updates, 11u);
    ASSERT_EQ(rep.gains.size(), 11u);
    double minus = p0;
    std::size_t row = 0;
    for (int k = 0; k <= 10; ++k) {
      const double t = k * h;
      // The history has P(t-) then P(t+) at each update time.
      while (row < rep.history_times.size() && rep.history_times[row] < t - 1e-12) ++row;
      ASSERT_LT(row + 1, rep.history_times.size());
      EXPECT_NEAR(rep.P[row](0, 0), minus, 1e-7 * minus) << "P- at t = " << t;
      const double plus = minus * R / (minus + R);
      EXPECT_NEAR(rep.P[row + 1](0, 0), plus, 1e-7 * plus) << "P+ at t = " << t;
      EXPECT_NEAR(rep.gains[k](0, 0), minus / (minus + R), 1e-7);
      minus = plus + q * h;
      row += 2;
    }
    const double final_p = minus - q * h + q * 0.25;
    EXPECT_NEAR(rep.P_final(0, 0), final_p, 1e-7 * final_p);
    EXPECT_NEAR(rep.sigma_final(0), std::sqrt(final_p), 1e-7);
    ASSERT_TRUE(rep.agreement.has_value());
    EXPECT_LT(*rep.agreement, 1e-7);
  }
}

TEST(CovarianceAnalysis, JosephUpdateEqualsTheTextbookFormWithTheOptimalGain) {
  // With the optimal gain, (I - KH) P (I - KH)' + K R K' = (I - KH) P (e.g. Gelb 1974, ch. 4);
  // the Joseph form stays symmetric positive definite where the short form may not.
  std::mt19937 rng(7);
  std::normal_distribution<double> z;
  Eigen::MatrixXd M(4, 4), H(2, 4), N(2, 2);
  for (int i = 0; i < 16; ++i) M(i / 4, i % 4) = z(rng);
  for (int i = 0; i < 8; ++i) H(i / 4, i % 4) = z(rng);
  for (int i = 0; i < 4; ++i) N(i / 2, i % 2) = z(rng);
  const Eigen::MatrixXd P = M * M.transpose() + 0.1 * Eigen::MatrixXd::Identity(4, 4);
  const Eigen::MatrixXd R = N * N.transpose() + 0.05 * Eigen::MatrixXd::Identity(2, 2);
  Eigen::MatrixXd K;
  const Eigen::MatrixXd joseph = joseph_update(P, H, R, &K);
  const Eigen::MatrixXd K_text = P * H.transpose() * (H * P * H.transpose() + R).inverse();
  const Eigen::MatrixXd text = (Eigen::MatrixXd::Identity(4, 4) - K_text * H) * P;
  EXPECT_LT((K - K_text).norm(), 1e-10 * K_text.norm());
  EXPECT_LT((joseph - text).norm(), 1e-10 * P.norm());
  EXPECT_LT((joseph - joseph.transpose()).norm(), 1e-14 * P.norm());
  // A measurement never adds uncertainty: P - P+ is positive semidefinite.
  EXPECT_GT(Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd>(P - joseph).eigenvalues().minCoeff(), -1e-12);
}

namespace {

// A double integrator (position, velocity) pushed by a random acceleration, position and
// velocity sensors: the setting of the numpy recursion and the Monte Carlo.
struct TwoStateCase {
  Eigen::MatrixXd A{2, 2}, G{2, 1}, Qn{1, 1}, P0{2, 2}, C{2, 2};
  std::unique_ptr<FunctionSystem> sys;
  NoiseModel noise;
  SensorSchedule schedule;
  double t0 = 0, t1 = 9.5;

  TwoStateCase() {
    A << 0, 1, -0.2, -0.05;
    G << 0, 1;
    Qn << 0.3;
    P0 << 1.0, 0.1, 0.1, 0.5;
    C.setIdentity();
    sys = std::make_unique<FunctionSystem>(std::vector<std::string>{"pos", "vel"});
    const Eigen::MatrixXd a = A, c = C, g = G;
    sys->set_A([a](double, MatrixRef m) { m = a; });
    sys->set_B({"accel"}, [g](double, MatrixRef m) { m = g; });
    sys->set_C({"pos_meas", "vel_meas"}, [c](double, MatrixRef m) { m = c; });
    noise.through = {"accel"};
    noise.Qn = WeightMatrix::constant(Qn, "Qn");
    noise.P0 = P0;
    std::vector<double> every;
    for (int k = 1; k <= 9; ++k) every.push_back(k * 1.0);
    schedule.sensors.push_back(sensor({"pos_meas"}, every, Eigen::MatrixXd::Constant(1, 1, 0.04)));
    Eigen::MatrixXd R2(2, 2);
    R2 << 0.02, 0.004, 0.004, 0.01;
    // At t = 4 both sensors report: the position first (listed first), then both together.
    schedule.sensors.push_back(sensor({"vel_meas", "pos_meas"}, {2.5, 4.0, 7.25}, R2));
  }

  // The updates in the order the library applies them, as JSON for the reference script.
  nlohmann::json updates_json() const {
    nlohmann::json u = nlohmann::json::array();
    for (const ScheduledUpdate& up : schedule_updates(schedule, *sys, t0, t1)) {
      const Sensor& s = schedule.sensors[up.sensor];
      Eigen::MatrixXd H(s.outputs.size(), 2);
      for (std::size_t i = 0; i < s.outputs.size(); ++i) H.row(i) = C.row(s.outputs[i] == "pos_meas" ? 0 : 1);
      u.push_back({{"t", up.t}, {"H", ordex_test::json_rows(H)}, {"R", ordex_test::json_rows(s.Rn.at(up.t))}});
    }
    return u;
  }

  nlohmann::json reference_input() const {
    using ordex_test::json_rows;
    return {{"A", json_rows(A)}, {"G", json_rows(G)}, {"Qn", json_rows(Qn)}, {"P0", json_rows(P0)},
            {"t0", t0}, {"t1", t1}, {"updates", updates_json()}};
  }
};

}  // namespace

TEST(CovarianceAnalysis, TwoSensorsMatchTheNumpyRecursion) {
  TwoStateCase c;
  EstimationOptions o;
  o.noise = c.noise;
  o.schedule = c.schedule;
  const EstimationReport rep = estimate(*c.sys, c.t0, c.t1, o);
  EXPECT_EQ(rep.updates, 12u);
  auto py = ordex_test::run_python("estimation_recursion.py", "'" + c.reference_input().dump() + "'");
  ASSERT_EQ(py.exit_code, 0) << py.err;
  const auto ref = nlohmann::json::parse(py.out);
  const Eigen::MatrixXd P = ordex_test::matrix_from_json(ref["P_final"]);
  EXPECT_LT((rep.P_final - P).norm(), 1e-7 * P.norm()) << rep.P_final << "\nnumpy:\n" << P;
  // P after the last update at each update time: the history row that follows P(t-) there.
  std::vector<double> update_times;
  for (const auto& up : c.updates_json()) update_times.push_back(up["t"].get<double>());
  for (std::size_t k = 0; k < update_times.size(); ++k) {
    const bool last_at_time = k + 1 == update_times.size() || update_times[k + 1] != update_times[k];
    if (!last_at_time) continue;
    const Eigen::MatrixXd Pk = ordex_test::matrix_from_json(ref["P_after"][k]);
    bool found = false;
    for (std::size_t r = 1; r < rep.history_times.size(); ++r)
      if (rep.history_times[r] == update_times[k] && rep.history_times[r - 1] == update_times[k]) {
        EXPECT_LT((rep.P[r] - Pk).norm(), 1e-7 * Pk.norm()) << "t = " << update_times[k];
        found = true;
      }
    EXPECT_TRUE(found) << "no row after the update at t = " << update_times[k];
  }
  ASSERT_TRUE(rep.agreement.has_value());
  EXPECT_LT(*rep.agreement, 1e-7);
  EXPECT_EQ(rep.to_json()["kind"], "covariance-analysis");
}

TEST(CovarianceAnalysis, MonteCarloErrorCovarianceMatchesP) {
  // 4000 seeded runs of plant and filter, the filter using the library's gains: the sample
  // variance of each state's error at t1 must lie within the 99.9% chi-square bounds of the
  // predicted variance P_final[i][i] (a sample variance times (N-1)/sigma^2 is chi-square with
  // N-1 degrees of freedom for Gaussian errors).
  TwoStateCase c;
  EstimationOptions o;
  o.noise = c.noise;
  o.schedule = c.schedule;
  o.cross_check = false;
  const EstimationReport rep = estimate(*c.sys, c.t0, c.t1, o);
  nlohmann::json in = c.reference_input();
  nlohmann::json gains = nlohmann::json::array();
  const auto ups = schedule_updates(c.schedule, *c.sys, c.t0, c.t1);
  for (std::size_t k = 0; k < ups.size(); ++k) {
    const Sensor& s = c.schedule.sensors[ups[k].sensor];
    Eigen::MatrixXd K(2, s.outputs.size());
    for (std::size_t i = 0; i < s.outputs.size(); ++i) K.col(i) = rep.gains[k].col(s.outputs[i] == "pos_meas" ? 0 : 1);
    gains.push_back(ordex_test::json_rows(K));
  }
  in["monte_carlo"] = {{"runs", 4000}, {"seed", 20261202}, {"gains", gains}};
  auto py = ordex_test::run_python("estimation_recursion.py", "'" + in.dump() + "'");
  ASSERT_EQ(py.exit_code, 0) << py.err;
  const auto ref = nlohmann::json::parse(py.out);
  const Eigen::MatrixXd E = ordex_test::matrix_from_json(ref["error_covariance"]);
  const double low = ref["chi2_low"], high = ref["chi2_high"];
  for (int i = 0; i < 2; ++i) {
    const double predicted = rep.P_final(i, i);
    EXPECT_GT(E(i, i), low * predicted) << "state " << i;
    EXPECT_LT(E(i, i), high * predicted) << "state " << i;
  }
  // And the filter is not the open loop: the predicted variance is well below P without updates.
  EXPECT_LT(rep.P_final(0, 0), 0.5 * c.P0(0, 0));
}

TEST(CovarianceAnalysis, RejectsScheduleMistakesNamingTheSensor) {
  TwoStateCase c;
  auto run = [&](SensorSchedule s) {
    EstimationOptions o;
    o.noise = c.noise;
    o.schedule = std::move(s);
    return ordex_test::input_error_of([&] { estimate(*c.sys, c.t0, c.t1, o); });
  };
  SensorSchedule s;
  s.sensors.push_back(sensor({"pos_meas"}, {1.0, 12.0}, Eigen::MatrixXd::Constant(1, 1, 0.1)));
  s.sensors.back().name = "plan.toml: measurement[1]";
  EXPECT_NE(run(s).find("plan.toml: measurement[1].times[2]: 12 is outside the window [0, 9.5]"), std::string::npos)
      << run(s);
  s.sensors.back() = sensor({"range"}, {1.0}, Eigen::MatrixXd::Constant(1, 1, 0.1));
  EXPECT_NE(run(s).find("no output 'range'"), std::string::npos) << run(s);
  s.sensors.back() = sensor({"pos_meas"}, {1.0}, Eigen::MatrixXd::Zero(1, 1));
  EXPECT_NE(run(s).find("Rn: not positive definite"), std::string::npos) << run(s);
  s.sensors.back() = sensor({"pos_meas"}, {1.0}, Eigen::MatrixXd::Identity(2, 2));
  EXPECT_NE(run(s).find("expected 1 x 1"), std::string::npos) << run(s);
}
