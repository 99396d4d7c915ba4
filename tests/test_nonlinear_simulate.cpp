// The simulate job and the apps of nonlinear models: closed-form nonlinear solutions, the gap to
// the linear prediction shrinking like the square of the deviation, Monte Carlo statistics of a
// linear plant against its closed form, thread independence, saturation, bad input.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <sstream>

#include "io/csv.hpp"
#include "io/errors.hpp"
#include "model/model_file.hpp"
#include "nonlinear/linearize.hpp"
#include "nonlinear/simulate.hpp"
#include "support.hpp"

using namespace ordex;
using namespace ordex_test;

namespace {

std::string write_model(const std::string& name, const std::string& text) {
  const std::string path = temp_dir() + "/" + name;
  write_file(path, text);
  return path;
}

PropagationOptions tight() {
  PropagationOptions o;
  o.rtol = 1e-10;
  o.atol = 1e-12;
  return o;
}

// x' = -x^2 about the nominal x_n(t) = 1/(1 + t).
const char* kQuadraticDecay = R"M(
[system]
states = ["x"]
[window]
from = 0
to = 4
[dynamics]
f = ["-x^2"]
[nominal]
x0 = [1]
)M";

// A harmonic oscillator (linear), for statistics with a closed form.
const char* kOscillator = R"M(
[system]
states = ["q", "p"]
[window]
from = 0
to = 2
[parameters]
w = 1.7
[dynamics]
f = ["p", "-w^2*q"]
[nominal]
x0 = [0, 0]
)M";

}  // namespace

// x' = -x^2 has the closed form x(t) = x0 / (1 + x0 t) (separation of variables); its
// linearization about x_n = 1/(1+t) is dx' = -2/(1+t) dx, whose transition is (1+t0)^2/(1+t)^2.
TEST(NonlinearSimulate, QuadraticDecayMatchesTheClosedForm) {
  NonlinearModel model = load_nonlinear_model(write_model("decay.toml", kQuadraticDecay), {}, tight());
  SimulateOptions o;
  o.propagation = tight();
  o.dx0 = Eigen::VectorXd::Constant(1, 0.5);
  o.keep_histories = true;
  o.samples = 9;
  SimulateReport r = simulate(model, o);
  ASSERT_EQ(r.runs.size(), 1u);
  const RunSummary& run = r.runs[0];
  ASSERT_TRUE(run.ok) << run.failure;
  for (std::size_t k = 0; k < run.times.size(); ++k) {
    const double t = run.times[k];
    EXPECT_NEAR(run.states(static_cast<Eigen::Index>(k), 0), 1.5 / (1 + 1.5 * t), 1e-8) << "t = " << t;
  }
  EXPECT_NEAR(run.dx_final(0), 1.5 / 7 - 1.0 / 5, 1e-8);
  EXPECT_NEAR(r.linear_transition(0, 0), 1.0 / 25, 1e-7);
  EXPECT_NEAR(run.linear_gap, std::abs(1.5 / 7 - 1.0 / 5 - 0.5 / 25), 1e-7);
  // The largest deviation is the initial one (the runs converge): 0.5 at t = 0.
  EXPECT_NEAR(run.peak_deviation, 0.5, 1e-12);
  EXPECT_EQ(run.peak_deviation_time, 0.0);
  // Cost: the integral of (1.5/(1+1.5t) - 1/(1+t))^2 over [0, 4], by Simpson's rule on a fine
  // grid (an independent quadrature of the closed form).
  double cost = 0;
  const int N = 20000;
  for (int i = 0; i <= N; ++i) {
    const double t = 4.0 * i / N, d = 1.5 / (1 + 1.5 * t) - 1 / (1 + t);
    cost += (i == 0 || i == N ? 1 : (i % 2 ? 4 : 2)) * d * d;
  }
  cost *= 4.0 / N / 3;
  EXPECT_NEAR(run.cost, cost, 1e-7);
}

// The nonlinear-minus-linear gap is second order in the initial deviation (Taylor's theorem
// for the flow): halving the deviation divides the gap by about 4. The chaser in two-body motion
// over one orbit of the target.
TEST(NonlinearSimulate, GapToTheLinearPredictionShrinksLikeTheSquare) {
  NonlinearModel model = load_nonlinear_model(model_path("chaser_two_body.toml"), {}, tight());
  Eigen::VectorXd v(6);
  v << 1.0, -0.5, 0.3, 0.0, 0.0005, -0.0002;  // km and km/s
  double previous = 0;
  for (double eps : {0.4, 0.2, 0.1}) {
    SimulateOptions o;
    o.propagation = tight();
    o.dx0 = eps * v;
    SimulateReport r = simulate(model, o);
    ASSERT_TRUE(r.runs[0].ok) << r.runs[0].failure;
    const double gap = r.runs[0].linear_gap;
    EXPECT_LT(gap, 1e-2 * r.runs[0].dx_final.norm());
    if (previous > 0) {
      EXPECT_GT(previous / gap, 3.6) << "eps = " << eps;
      EXPECT_LT(previous / gap, 4.4) << "eps = " << eps;
    }
    previous = gap;
  }
}

// Monte Carlo of a linear plant: q(T) = cos(wT) dq + sin(wT)/w dp with dq ~ N(0, 0.1^2) and
// dp ~ U(-0.2, 0.2) (variance 0.2^2/3): mean 0 and the standard deviation of that sum, within
// statistical bounds (4 standard errors; the sample standard deviation's relative standard error
// is about 1/sqrt(2N) for near-normal data, common practice). Identical runs on 1 and 2 threads.
TEST(NonlinearSimulate, MonteCarloOfALinearPlantMatchesTheClosedFormStatistics) {
  NonlinearModel model = load_nonlinear_model(write_model("osc.toml", kOscillator), {}, tight());
  const std::string disp = temp_dir() + "/osc_disp.toml";
  write_file(disp, "[initial_state]\nq = { sigma = 0.1 }\np = { half_width = 0.2 }\n");
  SimulateOptions o;
  o.propagation = tight();
  o.dispersions = read_dispersions(disp, model.info());
  o.runs = 600;
  o.seed = 7;
  o.threads = 2;
  SimulateReport r2 = simulate(model, o);
  ASSERT_EQ(r2.statistics.completed, 600);
  const double w = 1.7, T = 2, c = std::cos(w * T), s = std::sin(w * T);
  const double sd_q = std::sqrt(c * c * 0.01 + s * s / (w * w) * 0.04 / 3);
  const double sd_p = std::sqrt(w * w * s * s * 0.01 + c * c * 0.04 / 3);
  EXPECT_LT(std::abs(r2.statistics.dx_final_mean(0)), 4 * sd_q / std::sqrt(600.0));
  EXPECT_LT(std::abs(r2.statistics.dx_final_mean(1)), 4 * sd_p / std::sqrt(600.0));
  EXPECT_NEAR(r2.statistics.dx_final_std(0), sd_q, 4 * sd_q / std::sqrt(1200.0));
  EXPECT_NEAR(r2.statistics.dx_final_std(1), sd_p, 4 * sd_p / std::sqrt(1200.0));
  // A linear plant: the linear prediction is exact up to the integration error.
  EXPECT_LT(r2.statistics.linear_gap_max, 1e-7);

  o.threads = 1;
  o.runs = 50;
  SimulateReport r1 = simulate(model, o);
  for (int k = 0; k < 50; ++k) {
    EXPECT_EQ(r1.runs[k].dx0, r2.runs[k].dx0) << "run " << k;
    EXPECT_EQ(r1.runs[k].x_final, r2.runs[k].x_final) << "run " << k;
  }
}

// Saturation: x' = u with u = -K x, K = 1, limited to [-0.1, 0.1], from x = 1: the input is
// saturated while x > 0.1, so x(t) = 1 - 0.1 t up to t = 9 (closed form of the clipped law).
TEST(NonlinearSimulate, SaturatedInputFollowsTheClippedLaw) {
  const std::string path = write_model("integrator.toml", R"M(
[system]
states = ["x"]
inputs = ["u"]
[window]
from = 0
to = 5
[dynamics]
f = ["u"]
[nominal]
x0 = [0]
u = ["0"]
)M");
  const std::string gains = temp_dir() + "/k.csv";
  write_file(gains, "t,K_1_1\n0,1\n5,1\n");
  RunResult r = run_app("ordex-simulate", "--model " + path + " --gains " + gains +
                                              " --dx0 1 --u-min -0.1 --u-max 0.1 --samples 6 --json - --rtol 1e-10");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const Json j = Json::parse(r.out);
  EXPECT_NEAR(j["x_final"][0].get<double>(), 0.5, 1e-8);
  EXPECT_NEAR(j["peak_input"].get<double>(), 0.1, 1e-15);
  EXPECT_EQ(j["mode"], "closed loop");
}

// The tabulated model written by ordex-linearize gives the same A, B, C, D at the samples.
TEST(NonlinearSimulate, TabulatedLinearizationReproducesTheMatrices) {
  const std::string csv = temp_dir() + "/chaser_lin.csv", toml = temp_dir() + "/chaser_lin.toml";
  RunResult r = run_app("ordex-linearize", "--model " + model_path("chaser_two_body.toml") + " --samples 21 --csv " +
                                               csv + " --toml " + toml);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  auto tab = load_model(toml);
  auto lin = load_linearized_model(model_path("chaser_two_body.toml"));
  CsvTable table = read_csv(csv);
  ASSERT_EQ(table.values.rows(), 21);
  EXPECT_EQ(table.header[1], "x");
  EXPECT_EQ(table.header[7], "ax");
  EXPECT_EQ(table.header[10], "A_1_1");
  for (Eigen::Index k = 0; k < 21; ++k) {
    const double t = table.values(k, 0);
    EXPECT_LE((tab->A(t) - lin->A(t)).cwiseAbs().maxCoeff(), 1e-15 * (1 + lin->A(t).cwiseAbs().maxCoeff()));
    EXPECT_LE((tab->B(t) - lin->B(t)).cwiseAbs().maxCoeff(), 1e-15);
    EXPECT_LE((tab->C(t) - lin->C(t)).cwiseAbs().maxCoeff(), 1e-15);
  }
}

TEST(NonlinearSimulate, BadRunInputsExitTwoNamingTheKey) {
  const std::string model = model_path("chaser_two_body.toml");
  const std::string disp = temp_dir() + "/bad_disp.toml";
  write_file(disp, "[initial_state]\nxx = { sigma = 0.1 }\n");
  RunResult r = run_app("ordex-simulate", "--model " + model + " --disperse " + disp + " --runs 3");
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.err.find("initial_state.xx: the model has no state 'xx'"), std::string::npos) << r.err;
  write_file(disp, "[initial_state]\nx = { spread = 0.1 }\n");
  r = run_app("ordex-simulate", "--model " + model + " --disperse " + disp + " --runs 3");
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.err.find("initial_state.x.spread: unknown law"), std::string::npos) << r.err;
  const std::string gains = temp_dir() + "/bad_gains.csv";
  write_file(gains, "t,K_1_1,K_1_2\n0,1,2\n");
  r = run_app("ordex-simulate", "--model " + model + " --gains " + gains);
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.err.find(gains + ":1: the columns do not match the model"), std::string::npos) << r.err;
  r = run_app("ordex-simulate", "--model " + model + " --dx0 1,2");
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.err.find("--dx0: 2 entries, the model has 6 states"), std::string::npos) << r.err;
}

// A damped, driven pendulum flown closed loop with a constant gain: the final states of the run
// and of the nominal against scipy.integrate.solve_ivp (DOP853, rtol 1e-12) on the same
// equations (tests/reference/nonlinear_pendulum_ivp.py).
TEST(NonlinearSimulate, DrivenPendulumClosedLoopMatchesSolveIvp) {
  const std::string path = write_model("driven.toml", R"M(
[system]
states = ["theta", "omega"]
inputs = ["torque"]
[window]
from = 0
to = 6
[parameters]
w2 = 14.0
c = 0.3
[dynamics]
f = ["omega", "-w2*sin(theta) - c*omega + torque"]
[nominal]
x0 = [0.4, 0]
u = ["0.5*sin(2*t)"]
)M");
  const std::string gains = temp_dir() + "/pend_k.csv";
  write_file(gains, "t,K_1_1,K_1_2\n0,2,1\n6,2,1\n");
  RunResult r = run_app("ordex-simulate", "--model " + path + " --gains " + gains +
                                              " --dx0 0.8,-0.5 --rtol 1e-11 --atol 1e-13 --json -");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const Json j = Json::parse(r.out);
  RunResult ref = run_python("nonlinear_pendulum_ivp.py", "0.8,-0.5 6");
  ASSERT_EQ(ref.exit_code, 0) << ref.err;
  std::istringstream in(ref.out);
  double th, om, thn, omn;
  in >> th >> om >> thn >> omn;
  EXPECT_NEAR(j["x_final"][0].get<double>(), th, 1e-8);
  EXPECT_NEAR(j["x_final"][1].get<double>(), om, 1e-8);
  EXPECT_NEAR(j["nominal_final"][0].get<double>(), thn, 1e-8);
  EXPECT_NEAR(j["nominal_final"][1].get<double>(), omn, 1e-8);
}

// A regulator designed on the linearization (ordex-regulate on the nonlinear model) keeps the
// dispersed nonlinear chaser bounded and brings it back: every run completes, the final
// deviation is a small fraction of the initial one, and the gap to the linear prediction is
// small against the deviations flown (second order).
TEST(NonlinearSimulate, RegulatorDesignedOnTheLinearizationHoldsTheNonlinearChaser) {
  const std::string gains = temp_dir() + "/chaser_gains.csv", disp = temp_dir() + "/chaser_disp.toml";
  RunResult r = run_app("ordex-regulate", "--model " + model_path("chaser_two_body.toml") + " --weights " +
                                              model_path("orbit_approach_weights.toml") + " --samples 201 --csv " + gains);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  write_file(disp, "[initial_state]\nx = { sigma = 0.5 }\ny = { sigma = 0.5 }\nvy = { half_width = 0.0005 }\n"
                   "[parameters]\nmu = { sigma = 0.5 }\n");
  r = run_app("ordex-simulate", "--model " + model_path("chaser_two_body.toml") + " --gains " + gains +
                                    " --disperse " + disp + " --runs 20 --seed 11 --json -");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const Json j = Json::parse(r.out);
  EXPECT_EQ(j["statistics"]["completed"], 20);
  for (const Json& run : j["runs"]) {
    double d0 = 0, d1 = 0;
    for (int i = 0; i < 3; ++i) {
      d0 = std::max(d0, std::abs(run["dx0"][i].get<double>()));
      d1 = std::max(d1, std::abs(run["dx_final"][i].get<double>()));
    }
    EXPECT_LT(d1, 1e-3 * d0 + 1e-6);
    EXPECT_LT(run["peak_deviation"].get<double>(), 10 * (d0 + 1));
  }
  EXPECT_LT(j["statistics"]["linear_gap_max"].get<double>(), 1e-3);
}

// x' = x^2 blows up at t = 1/x0 (closed form x0/(1 - x0 t)): dispersed runs that start above 0.5
// cannot reach t = 2 and are recorded as failed; the batch goes on and the others complete.
TEST(NonlinearSimulate, AFailingRunIsRecordedAndTheBatchGoesOn) {
  const std::string path = write_model("blowup.toml", R"M(
[system]
states = ["x"]
[window]
from = 0
to = 2
[dynamics]
f = ["x^2"]
[nominal]
x0 = [0.1]
)M");
  const std::string disp = temp_dir() + "/blowup_disp.toml";
  write_file(disp, "[initial_state]\nx = { half_width = 1.0 }\n");
  RunResult r = run_app("ordex-simulate", "--model " + path + " --disperse " + disp + " --runs 12 --seed 5 --json -");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const Json j = Json::parse(r.out);
  int failed = 0;
  for (const Json& run : j["runs"]) {
    const double x0 = 0.1 + run["dx0"][0].get<double>();
    EXPECT_EQ(run["ok"].get<bool>(), x0 < 0.5) << "x0 = " << x0;  // 1/x0 > 2 completes
    if (!run["ok"].get<bool>()) {
      ++failed;
      EXPECT_FALSE(run["failure"].get<std::string>().empty());
    } else {
      EXPECT_NEAR(run["x_final"][0].get<double>(), x0 / (1 - 2 * x0), 1e-6 * (1 + x0 / (1 - 2 * x0)));
    }
  }
  EXPECT_GT(failed, 0);
  EXPECT_EQ(j["statistics"]["failed"], failed);
}

// A disturbance history adds to the input: x' = u with u_n = 0 and w rising linearly from 0 to
// 1 over [0, 2], then held: x(4) = 1 (the ramp's area) + 2 = 3.
TEST(NonlinearSimulate, DisturbanceHistoryAddsToTheInput) {
  const std::string path = write_model("integrator_w.toml", R"M(
[system]
states = ["x"]
inputs = ["u"]
[window]
from = 0
to = 4
[dynamics]
f = ["u"]
[nominal]
x0 = [0]
u = ["0"]
)M");
  const std::string w = temp_dir() + "/gust.csv";
  write_file(w, "t,u\n0,0\n2,1\n");
  RunResult r = run_app("ordex-simulate", "--model " + path + " --disturbance " + w + " --json -");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const Json j = Json::parse(r.out);
  EXPECT_NEAR(j["x_final"][0].get<double>(), 3.0, 1e-8);
  EXPECT_NEAR(j["peak_input"].get<double>(), 1.0, 1e-12);
  write_file(w, "t,v\n0,0\n2,1\n");
  r = run_app("ordex-simulate", "--model " + path + " --disturbance " + w);
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.err.find(w + ":1: column 'v' is not an input of the model"), std::string::npos) << r.err;
}

// The blade with large flap deflections: the linearization written by ordex-linearize against
// the Jacobian derived by hand from its equation, A[2][1] = -Omega^2 cos(2 beta_n),
// A[2][2] = -gamma Omega / 8, B = gamma Omega^2 / 8, C = radius cos(beta_n), with beta_n the
// nominal column of the same CSV.
TEST(NonlinearSimulate, BladeFlapLinearizationMatchesTheHandDerivedJacobian) {
  const std::string csv = temp_dir() + "/blade.csv";
  RunResult r = run_app("ordex-linearize", "--model " + model_path("blade_flap_large.toml") + " --samples 50 --csv " + csv);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  CsvTable t = read_csv(csv);
  auto col = [&](const std::string& name) {
    auto it = std::find(t.header.begin(), t.header.end(), name);
    EXPECT_NE(it, t.header.end()) << name;
    return static_cast<Eigen::Index>(it - t.header.begin());
  };
  const double Omega = 40, gamma = 6, radius = 1.1;
  double largest_beta = 0;
  for (Eigen::Index k = 0; k < t.values.rows(); ++k) {
    const double beta = t.values(k, col("beta"));
    largest_beta = std::max(largest_beta, std::abs(beta));
    EXPECT_NEAR(t.values(k, col("A_2_1")), -Omega * Omega * std::cos(2 * beta), 1e-9 * Omega * Omega);
    EXPECT_NEAR(t.values(k, col("A_2_2")), -gamma * Omega / 8, 1e-12);
    EXPECT_NEAR(t.values(k, col("B_2_1")), gamma * Omega * Omega / 8, 1e-10);
    EXPECT_NEAR(t.values(k, col("C_1_1")), radius * std::cos(beta), 1e-12);
  }
  EXPECT_GT(largest_beta, 0.2);  // large deflections: cos(2 beta) far from 1
}
