// The regulator job called from C++ without the apps' front end: the gain schedule inside the
// report against outside references (the scalar tanh closed form, scipy's algebraic Riccati
// solution, scipy's Radau on a stiff periodic plant), the JSON header, the closed-loop check and
// its failure with the gains kept, and validate() messages that name Options fields.
#include <gtest/gtest.h>

#include <cmath>
#include <nlohmann/json.hpp>
#include <sstream>

#include "io/errors.hpp"
#include "model/function_system.hpp"
#include "model/model_file.hpp"
#include "riccati/regulator.hpp"
#include "riccati/weights.hpp"
#include "job_support.hpp"
#include "support.hpp"

using namespace ordex;
using ordex_test::input_error_of;
using ordex_test::scalar_plant;

namespace {

const std::string kData = std::string(ORDEX_TESTS_DIR) + "/data/";

Weights scalar_weights(double q, double r) {
  Weights w = default_weights(1, 1);
  w.Q = WeightMatrix::constant(Eigen::MatrixXd::Constant(1, 1, q), "Q");
  w.R = WeightMatrix::constant(Eigen::MatrixXd::Constant(1, 1, r), "R");
  w.source = "code";
  return w;
}

nlohmann::json to_py(const Eigen::MatrixXd& m) {
  nlohmann::json j = nlohmann::json::array();
  for (Eigen::Index i = 0; i < m.rows(); ++i) {
    nlohmann::json row = nlohmann::json::array();
    for (Eigen::Index k = 0; k < m.cols(); ++k) row.push_back(m(i, k));
    j.push_back(row);
  }
  return j;
}

// T with full precision, for a command line.
std::string repr(double t) {
  std::ostringstream o;
  o.precision(17);
  o << t;
  return o.str();
}

}  // namespace

TEST(RegulatorJob, GainScheduleInTheReportFollowsTheTanhClosedForm) {
  const double a = 0.7, b = 1.5, q = 2.0, r = 0.5, t1 = 3.0;
  auto sys = scalar_plant(a, b);
  RegulatorOptions o;
  o.weights = scalar_weights(q, r);
  o.samples = 31;
  o.riccati.propagation.rtol = 1e-10;
  o.riccati.propagation.atol = 1e-12;
  const RegulatorReport rep = regulate(*sys, 0.0, t1, o);
  ASSERT_EQ(rep.times.size(), 31u);
  ASSERT_EQ(rep.gains.size(), 31u);
  // Scalar LQR with Qf = 0: P = q tanh(beta tau) / (beta - a tanh(beta tau)), tau = t1 - t,
  // beta = sqrt(a^2 + b^2 q / r) (textbook closed form, recalled from memory; derived again in
  // test_riccati_solver.cpp from the general scalar solution); K = b P / r.
  const double beta = std::sqrt(a * a + b * b * q / r);
  const nlohmann::json j = nlohmann::json::parse(rep.to_json().dump());
  for (std::size_t k = 0; k < rep.times.size(); ++k) {
    const double t = rep.times[k], th = std::tanh(beta * (t1 - t));
    const double K = b * (q * th / (beta - a * th)) / r;
    EXPECT_NEAR(t, t1 * k / 30.0, 1e-14);
    EXPECT_NEAR(rep.gains[k](0, 0), K, 1e-8 * std::max(1.0, K)) << "t = " << t;
    // The JSON carries the same schedule, with full precision.
    EXPECT_EQ(j["gain_schedule"]["times"][k].get<double>(), t);
    EXPECT_EQ(j["gain_schedule"]["K"][k][0][0].get<double>(), rep.gains[k](0, 0));
  }
  EXPECT_EQ(rep.K0(0, 0), rep.gains.front()(0, 0));
  EXPECT_EQ(rep.closed_loop.status, ClosedLoopCheck::Status::Done);
  EXPECT_FALSE(rep.cost_predicted);  // no x0
}

TEST(RegulatorJob, JsonStartsWithTheCommonHeader) {
  auto sys = load_model(kData + "riccati_scalar.toml", {{"a", 0.9}});
  RegulatorOptions o;
  o.x0 = Eigen::VectorXd::Constant(1, 2.0);
  const RegulatorReport rep = regulate(*sys, 0.0, 3.0, o);
  const Json j = rep.to_json();
  std::vector<std::string> keys;
  for (auto it = j.begin(); it != j.end(); ++it) keys.push_back(it.key());
  ASSERT_GE(keys.size(), 5u);
  EXPECT_EQ((std::vector<std::string>(keys.begin(), keys.begin() + 5)),
            (std::vector<std::string>{"ordex_version", "model", "t0", "t1", "method"}));
  EXPECT_EQ(j["ordex_version"], ORDEX_VERSION);
  EXPECT_EQ(j["model"]["title"], "scalar test plant");
  EXPECT_EQ(j["model"]["source"], kData + "riccati_scalar.toml");
  EXPECT_EQ(j["model"]["parameters"]["a"].get<double>(), 0.9);  // the value after the override
  EXPECT_EQ(j["model"]["parameters"]["b"].get<double>(), 1.5);
  EXPECT_EQ(j["t0"].get<double>(), 0.0);
  EXPECT_EQ(j["t1"].get<double>(), 3.0);
  EXPECT_EQ(j["method"], "cvode-bdf");
  EXPECT_FALSE(j.contains("app"));  // the app adds it
  EXPECT_EQ(j["closed_loop"]["status"], "ok");
  // Completing the square: the optimal run's cost is x0' P(t0) x0.
  EXPECT_NEAR(j["cost_simulated"].get<double>(), j["cost_predicted"].get<double>(),
              1e-7 * j["cost_predicted"].get<double>());
}

TEST(RegulatorJob, LongHorizonGainApproachesScipyAlgebraicRiccati) {
  // A constant, open-loop unstable pair over a horizon long against its time constants: K(t0)
  // tends to the algebraic solution's gain (scipy.linalg.solve_continuous_are).
  Eigen::MatrixXd A(2, 2), B(2, 1);
  A << 0.0, 1.0, 2.0, -0.3;
  B << 0.0, 1.0;
  auto sys = std::make_unique<FunctionSystem>(std::vector<std::string>{"p", "v"});
  sys->set_A([A](double, MatrixRef m) { m = A; });
  sys->set_B({"f"}, [B](double, MatrixRef m) { m = B; });
  RegulatorOptions o;
  o.samples = 11;
  o.riccati.propagation.rtol = 1e-10;
  o.riccati.propagation.atol = 1e-12;
  const RegulatorReport rep = regulate(*sys, 0.0, 30.0, o);
  const Eigen::MatrixXd I = Eigen::MatrixXd::Identity(2, 2), R = Eigen::MatrixXd::Identity(1, 1);
  nlohmann::json in = {{"A", to_py(A)}, {"B", to_py(B)}, {"Q", to_py(I)}, {"R", to_py(R)}};
  auto py = ordex_test::run_python("riccati_care.py", "'" + in.dump() + "'");
  ASSERT_EQ(py.exit_code, 0) << py.err;
  const Eigen::MatrixXd K = ordex_test::matrix_from_json(nlohmann::json::parse(py.out)["K"]);
  EXPECT_LT((rep.gains.front() - K).cwiseAbs().maxCoeff(), 1e-8 * K.cwiseAbs().maxCoeff());
  // And the closed loop over the whole horizon is the engine's, with the schedule: stable.
  ASSERT_TRUE(rep.closed_loop.phi);
  EXPECT_LT(rep.closed_loop.phi->norm(), 1e-3);
}

TEST(RegulatorJob, StiffPeriodicPlantGivesTheScheduleAndABoundedCheck) {
  auto sys = load_model(kData + "regulator_stiff_blade.toml");
  const double T = 2 * M_PI / 38.0, t1 = 12 * T;
  RegulatorOptions o;
  o.x0 = Eigen::Vector2d(0.01, 0.0);
  o.samples = 13;  // one a revolution
  const RegulatorReport rep = regulate(*sys, 0.0, t1, o);
  // The gain schedule against scipy's Radau on the Riccati equation (an implicit method built
  // for stiff problems), at three of the schedule's times.
  auto py = ordex_test::run_python("riccati_stiff_blade.py", "0," + repr(rep.times[5]) + "," +
                                                                   repr(rep.times[11]));
  ASSERT_EQ(py.exit_code, 0) << py.err;
  const nlohmann::json ref = nlohmann::json::parse(py.out);
  const std::size_t at[] = {0, 5, 11};
  for (int i = 0; i < 3; ++i) {
    const Eigen::MatrixXd K = ordex_test::matrix_from_json(ref["K"][i]);
    EXPECT_LT((rep.gains[at[i]] - K).cwiseAbs().maxCoeff(), 1e-6 * K.cwiseAbs().maxCoeff()) << "t = " << rep.times[at[i]];
  }
  // The check either ran or failed with a reason; within its step budget either way.
  const ClosedLoopCheck& c = rep.closed_loop;
  ASSERT_NE(c.status, ClosedLoopCheck::Status::Skipped);
  if (c.status == ClosedLoopCheck::Status::Failed) {
    EXPECT_FALSE(c.reason.empty());
  } else {
    ASSERT_TRUE(c.floquet);
    EXPECT_TRUE(c.floquet->floquet.stable);  // the optimal closed loop of a stable plant
    ASSERT_TRUE(c.run);
    EXPECT_NEAR(c.run->cost_simulated, *rep.cost_predicted, 1e-6 * *rep.cost_predicted);
  }
  EXPECT_LE(c.stats.steps, o.check_max_steps);
  if (c.run) EXPECT_LE(c.run->stats.steps, o.check_max_steps);
}

TEST(RegulatorJob, FailedCheckKeepsTheGainsAndSaysWhy) {
  auto sys = load_model(kData + "regulator_stiff_blade.toml");
  const double t1 = 12 * 2 * M_PI / 38.0;
  RegulatorOptions full;
  full.x0 = Eigen::Vector2d(0.01, 0.0);
  full.check_closed_loop = false;
  const RegulatorReport unchecked = regulate(*sys, 0.0, t1, full);
  EXPECT_EQ(unchecked.closed_loop.status, ClosedLoopCheck::Status::Skipped);
  EXPECT_EQ(unchecked.to_json()["closed_loop"]["status"], "skipped");
  // A budget of 100 steps cannot cover twelve stiff revolutions: both parts stop at once.
  RegulatorOptions tight = full;
  tight.check_closed_loop = true;
  tight.check_max_steps = 100;
  const RegulatorReport rep = regulate(*sys, 0.0, t1, tight);
  ASSERT_EQ(rep.closed_loop.status, ClosedLoopCheck::Status::Failed);
  EXPECT_NE(rep.closed_loop.reason.find("closed-loop"), std::string::npos) << rep.closed_loop.reason;
  EXPECT_NE(rep.closed_loop.reason.find("100"), std::string::npos) << rep.closed_loop.reason;
  // The gains are those of the unchecked run, to the last bit: the check never touches them.
  ASSERT_EQ(rep.gains.size(), unchecked.gains.size());
  for (std::size_t k = 0; k < rep.gains.size(); ++k) EXPECT_EQ(rep.gains[k], unchecked.gains[k]);
  const Json j = rep.to_json();
  EXPECT_EQ(j["closed_loop"]["status"], "failed");
  EXPECT_EQ(j["closed_loop"]["reason"].get<std::string>(), rep.closed_loop.reason);
  EXPECT_TRUE(j["cost_simulated"].is_null());
  EXPECT_TRUE(j["x_final"].is_null());
  EXPECT_FALSE(j["cost_predicted"].is_null());
  EXPECT_EQ(j["gain_schedule"]["K"].size(), rep.gains.size());
  EXPECT_NE(rep.brief().find("closed-loop check: FAILED"), std::string::npos) << rep.brief();
}

TEST(RegulatorJob, ValidateNamesTheFields) {
  auto sys = scalar_plant(0.5, 1.0);
  auto fails = [&](const RegulatorOptions& o) { return input_error_of([&] { regulate(*sys, 0.0, 1.0, o); }); };
  RegulatorOptions o;
  o.samples = 1;
  EXPECT_NE(fails(o).find("RegulatorOptions::samples = 1 is outside [2, 10000000]"), std::string::npos) << fails(o);
  o = {};
  o.check_max_steps = 5;
  EXPECT_NE(fails(o).find("RegulatorOptions::check_max_steps = 5"), std::string::npos) << fails(o);
  o = {};
  o.x0 = Eigen::Vector2d(1.0, 2.0);
  EXPECT_NE(fails(o).find("RegulatorOptions::x0: 2 entries, the model has 1 states"), std::string::npos) << fails(o);
  o = {};
  o.riccati.dense_intervals = 0;
  EXPECT_NE(fails(o).find("RiccatiOptions::dense_intervals = 0 is outside"), std::string::npos) << fails(o);
  o = {};
  o.riccati.propagation.rtol = 1;
  EXPECT_NE(fails(o).find("PropagationOptions::rtol"), std::string::npos) << fails(o);
  o = {};
  o.closed_loop.rtol = 0.5;
  EXPECT_NE(fails(o).find("ClosedLoopOptions::rtol = 0.5"), std::string::npos) << fails(o);
  o = {};
  o.riccati.weight_check.symmetry_tolerance = 0;
  EXPECT_NE(fails(o).find("WeightCheckOptions::symmetry_tolerance"), std::string::npos) << fails(o);
  EXPECT_NE(input_error_of([] { parse_solver("fastest"); }).find("RiccatiOptions::solver: unknown solver 'fastest'"),
            std::string::npos);
  // The window is an argument: a backward one says so.
  EXPECT_NE(input_error_of([&] { regulate(*sys, 1.0, 0.0, {}); }).find("forward"), std::string::npos);
  // No message names a command-line flag.
  for (const std::string& m : {fails(o), input_error_of([&] { regulate(*sys, 1.0, 0.0, {}); })})
    EXPECT_EQ(m.find("--"), std::string::npos) << m;
}

TEST(RegulatorJob, ModelDefinedOnlyOnTheWindowIsNeverEvaluatedBeyondIt) {
  // The lateral-vehicle model reads its speed from a table that refuses times outside [0, 20]
  // (outside = "error"), and its window is that span: both Riccati routes, the closed-loop run
  // and the transition matrix must keep inside it (CVODE stops on the window's ends).
  auto sys = load_model(ordex_test::model_path("vehicle_lateral.toml"));
  ASSERT_TRUE(sys->info().defined_span.has_value());
  for (RiccatiSolver solver : {RiccatiSolver::RiccatiOde, RiccatiSolver::Hamiltonian}) {
    RegulatorOptions o;
    o.riccati.solver = solver;
    o.x0 = Eigen::VectorXd::Constant(4, 0.1);
    const RegulatorReport r = regulate(*sys, 0.0, 20.0, o);
    EXPECT_EQ(r.closed_loop.status, ClosedLoopCheck::Status::Done) << r.closed_loop.reason;
    // The optimal-cost identity (Kalman 1960): the simulated closed-loop cost equals x0' P(t0) x0.
    ASSERT_TRUE(r.closed_loop.run.has_value());
    const double predicted = o.x0->dot(r.P0 * *o.x0);
    EXPECT_NEAR(r.closed_loop.run->cost_simulated, predicted, 1e-4 * predicted);
    EXPECT_NEAR(r.closed_loop.run->cost_predicted, predicted, 1e-9 * predicted);
  }
}
