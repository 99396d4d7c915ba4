// Control-input selection (--controls), output weights (Qy) and weights that use the model's
// symbols, through the library and the apps; ordex-regulate --periodic end to end. References:
// the double integrator's reachability Gramian in closed form, the same problems written with the
// reduced B or the expanded weights, and the finite-horizon regulator's long-horizon limit.
#include <gtest/gtest.h>

#include <cmath>
#include <nlohmann/json.hpp>

#include "io/errors.hpp"
#include "model/input_selection.hpp"
#include "model/model_file.hpp"
#include "riccati/regulator.hpp"
#include "riccati/weights.hpp"
#include "job_support.hpp"
#include "support.hpp"

using namespace ordex;
using ordex_test::run_app;
using ordex_test::temp_dir;
using ordex_test::write_file;

namespace {

std::string data(const std::string& name, const std::string& text) {
  const std::string path = temp_dir() + "/" + name;
  write_file(path, text);
  return path;
}

// A double integrator with a control f and a disturbance w entering both states.
std::string two_input_model() {
  return data("ctl_two_inputs.toml", R"M(
[system]
states = ["p", "v"]
inputs = ["f", "w"]
outputs = ["pm"]
[window]
from = 0
to = 2
[matrices]
A = [[0, 1], [0, 0]]
B = [[0, 0.3], [1, 0.5]]
C = [[1, 0]]
D = [[0, 0.2]]
)M");
}

std::string one_input_model(const std::string& name, const std::string& column, const std::string& d) {
  return data(name, R"M(
[system]
states = ["p", "v"]
inputs = ["u"]
outputs = ["pm"]
[window]
from = 0
to = 2
[matrices]
A = [[0, 1], [0, 0]]
B = )M" + column + R"M(
C = [[1, 0]]
D = )M" + d + "\n");
}

nlohmann::json app_json(const std::string& app, const std::string& args) {
  auto r = run_app(app, args + " --json -");
  EXPECT_EQ(r.exit_code, 0) << r.err;
  return r.exit_code == 0 ? nlohmann::json::parse(r.out) : nlohmann::json();
}

double rel_err(const Eigen::MatrixXd& a, const Eigen::MatrixXd& b) {
  return (a - b).cwiseAbs().maxCoeff() / std::max(1e-300, b.cwiseAbs().maxCoeff());
}

}  // namespace

TEST(Controls, GramianOfOneInputIsTheClosedFormAndTheReducedModels) {
  const std::string two = two_input_model();
  const nlohmann::json j = app_json("ordex-gramian", "--model " + two + " --kind reachability --controls f --rtol 1e-11 --atol 1e-13");
  const Eigen::MatrixXd W = ordex_test::matrix_from_json(j["gramian"]);
  // Reachability Gramian of p'' = f over [0, T]: [[T^3/3, T^2/2], [T^2/2, T]] (closed form).
  const double T = 2.0;
  Eigen::Matrix2d ref;
  ref << T * T * T / 3, T * T / 2, T * T / 2, T;
  EXPECT_LT(rel_err(W, ref), 1e-9);
  EXPECT_EQ(j["controls"], nlohmann::json::array({"f"}));
  // The other input alone equals the model written with only that column of B.
  const nlohmann::json jw = app_json("ordex-gramian", "--model " + two + " --kind reachability --controls w");
  const nlohmann::json jr = app_json("ordex-gramian", "--model " + one_input_model("ctl_w.toml", "[[0.3], [0.5]]", "[[0.2]]") +
                                                          " --kind reachability");
  EXPECT_LT(rel_err(ordex_test::matrix_from_json(jw["gramian"]), ordex_test::matrix_from_json(jr["gramian"])), 1e-12);
  // Both, in the other order, are the full model's Gramian.
  const nlohmann::json jb = app_json("ordex-gramian", "--model " + two + " --kind reachability --controls w,f");
  const nlohmann::json ja = app_json("ordex-gramian", "--model " + two + " --kind reachability");
  EXPECT_LT(rel_err(ordex_test::matrix_from_json(jb["gramian"]), ordex_test::matrix_from_json(ja["gramian"])), 1e-12);
}

TEST(Controls, TransferUsesOnlyTheControls) {
  const std::string two = two_input_model();
  const std::string out = temp_dir() + "/ctl_transfer.csv";
  auto r = run_app("ordex-gramian", "--model " + two + " --controls f --xf 1,0 --input-out " + out + " --json -");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  // The input file has the control's column only.
  EXPECT_EQ(ordex_test::read_file(out).substr(0, 4), "t,f\n");
  // Minimum energy from 0 to (1, 0) over [0, 2]: xf' W_r^-1 xf = 12 / T^3 = 1.5 (closed form).
  const nlohmann::json j = nlohmann::json::parse(r.out);
  EXPECT_NEAR(j["transfer"]["energy"].get<double>(), 12.0 / 8.0, 1e-6);
}

TEST(Controls, UnknownNameIsExit2ListingTheInputs) {
  for (const std::string app : {"ordex-gramian", "ordex-regulate"}) {
    auto r = run_app(app, "--model " + two_input_model() + " --controls f,gust --json -");
    EXPECT_EQ(r.exit_code, 2) << app;
    EXPECT_NE(r.err.find("--controls: unknown input 'gust' (the model's inputs: f, w)"), std::string::npos) << r.err;
    EXPECT_EQ(ordex_test::line_count(r.err), 1) << r.err;
  }
  auto twice = run_app("ordex-regulate", "--model " + two_input_model() + " --controls f,f --json -");
  EXPECT_EQ(twice.exit_code, 2);
}

TEST(Controls, RegulatorWithOneControlIsTheReducedProblem) {
  const std::string two = two_input_model();
  const std::string w = data("ctl_w1.toml", "Q = [1, 0.5]\nR = [[0.3]]\nQf = [1, 1]\n");
  const nlohmann::json a = app_json("ordex-regulate", "--model " + two + " --controls f --weights " + w);
  const nlohmann::json b = app_json("ordex-regulate", "--model " + one_input_model("ctl_f.toml", "[[0], [1]]", "[[0]]") +
                                                          " --weights " + w);
  EXPECT_LT(rel_err(ordex_test::matrix_from_json(a["P0"]), ordex_test::matrix_from_json(b["P0"])), 1e-12);
  EXPECT_EQ(a["K0"].size(), 1u);
  // R sized for the selection: a 2 x 2 R is refused with the file and key.
  const std::string bad = data("ctl_w2.toml", "R = [1, 1]\n");
  auto r = run_app("ordex-regulate", "--model " + two + " --controls f --weights " + bad + " --json -");
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.err.find("ctl_w2.toml: R"), std::string::npos) << r.err;
}

TEST(OutputWeight, QyOnThePositionIsQDiagOneZero) {
  auto sys = load_model(one_input_model("qy_plant.toml", "[[0], [1]]", "[[0]]"));
  const Weights wy = load_weights(data("qy.toml", "Qy = [[1]]\nQ = [0, 0]\n"), *sys);
  const Weights wq = load_weights(data("q10.toml", "Q = [1, 0]\n"), *sys);
  RegulatorOptions o;
  o.check_closed_loop = false;
  o.weights = wy;
  const RegulatorReport a = regulate(*sys, 0.0, 2.0, o);
  o.weights = wq;
  const RegulatorReport b = regulate(*sys, 0.0, 2.0, o);
  EXPECT_LT(rel_err(a.P0, b.P0), 1e-12);
  EXPECT_GT(b.P0.norm(), 0.1);
}

TEST(OutputWeight, WithAFeedthroughItIsTheExpandedWeights) {
  // y = p + 0.2 w: y'Qy y = x'C'QyC x + 2 x'C'QyD u + u'D'QyD u with C = [1 0], D = [0 0.2].
  const std::string two = two_input_model();
  auto sys = load_model(two);
  const Weights wy = load_weights(data("qy2.toml", "Qy = [[3]]\nR = [1, 2]\nQ = [0.5, 0.1]\n"), *sys);
  const Weights we = load_weights(data("qy2e.toml", "Q = [[3.5, 0], [0, 0.1]]\nR = [[1, 0], [0, 2.12]]\n"
                                                    "N = [[0, 0.6], [0, 0]]\n"), 2, 2);
  RegulatorOptions o;
  o.check_closed_loop = false;
  o.weights = wy;
  const RegulatorReport a = regulate(*sys, 0.0, 2.0, o);
  o.weights = we;
  const RegulatorReport b = regulate(*sys, 0.0, 2.0, o);
  EXPECT_LT(rel_err(a.P0, b.P0), 1e-12);
  EXPECT_LT(rel_err(a.K0, b.K0), 1e-12);
  // No outputs: Qy is refused naming the key.
  auto plain = load_model(std::string(ORDEX_TESTS_DIR) + "/data/riccati_scalar.toml");
  const std::string msg = ordex_test::input_error_of([&] { load_weights(data("qy3.toml", "Qy = [[1]]\n"), *plain); });
  EXPECT_NE(msg.find("qy3.toml: Qy"), std::string::npos) << msg;
}

TEST(SymbolWeights, AParameterWeightFollowsSet) {
  const std::string model = std::string(ORDEX_MODELS_DIR) + "/pumped_oscillator.toml";
  const std::string wq = data("sym_q.toml", "Q = [\"q\", 1]\n");
  for (const double q : {0.4, 0.25}) {
    const std::string wn = data("sym_n.toml", "Q = [" + std::to_string(q) + ", 1]\n");
    const nlohmann::json a = app_json("ordex-regulate", "--model " + model + " --set q=" + std::to_string(q) + " --weights " + wq);
    const nlohmann::json b = app_json("ordex-regulate", "--model " + model + " --set q=" + std::to_string(q) + " --weights " + wn);
    EXPECT_LT(rel_err(ordex_test::matrix_from_json(a["P0"]), ordex_test::matrix_from_json(b["P0"])), 1e-12) << q;
  }
}

TEST(SymbolWeights, ADefineWeightIsItsExpressionOfT) {
  // pumped_oscillator.toml: stiffness = a - 2 q cos 2t with a = 1.2, q = 0.4.
  auto sys = load_model(std::string(ORDEX_MODELS_DIR) + "/pumped_oscillator.toml");
  const Weights ws = load_weights(data("sym_d.toml", "Q = [\"stiffness^2\", 1]\n"), *sys);
  const Weights wt = load_weights(data("sym_t.toml", "Q = [\"(1.2 - 0.8*cos(2*t))^2\", 1]\n"), *sys);
  for (double t : {0.0, 0.7, 2.9}) EXPECT_NEAR(ws.Q.at(t)(0, 0), wt.Q.at(t)(0, 0), 1e-14) << t;
  const std::string msg = ordex_test::input_error_of([&] { load_weights(data("sym_bad.toml", "Q = [\"qq\", 1]\n"), *sys); });
  EXPECT_NE(msg.find("sym_bad.toml: Q[1]"), std::string::npos) << msg;
}

TEST(RegulatePeriodicApp, GainOverOnePeriodAndStableMultipliers) {
  const std::string model = std::string(ORDEX_MODELS_DIR) + "/pumped_oscillator.toml";
  const std::string csv = temp_dir() + "/per_gain.csv";
  const nlohmann::json j =
      app_json("ordex-regulate", "--model " + model + " --periodic --samples 9 --rtol 1e-10 --atol 1e-12 --csv " + csv);
  EXPECT_EQ(j["mode"], "periodic");
  EXPECT_TRUE(j["floquet"]["stable"].get<bool>());
  EXPECT_FALSE(j["open_loop_floquet"]["stable"].get<bool>());
  EXPECT_LE(j["periodic"]["periodicity_gap"].get<double>(), 1e-6);
  EXPECT_NEAR(j["t1"].get<double>(), M_PI, 1e-12);
  // The CSV: 9 rows over [0, pi], header t,K_1_1,K_1_2.
  const std::string text = ordex_test::read_file(csv);
  EXPECT_EQ(text.substr(0, text.find('\n')), "t,K_1_1,K_1_2");
  EXPECT_EQ(ordex_test::line_count(text), 10);
  // The finite-horizon regulator over 20 periods (Qf = 0) has the same P(t0).
  const nlohmann::json longer = app_json("ordex-regulate", "--model " + model + " --to 20*pi --no-check --rtol 1e-10 --atol 1e-12");
  EXPECT_LT(rel_err(ordex_test::matrix_from_json(j["P0"]), ordex_test::matrix_from_json(longer["P0"])), 1e-6);
}

TEST(RegulatePeriodicApp, ModelWithoutPeriodIsExit2) {
  auto r = run_app("ordex-regulate", "--model " + std::string(ORDEX_TESTS_DIR) + "/data/riccati_scalar.toml --periodic --json -");
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.err.find("riccati_scalar.toml: --periodic needs a model with a period"), std::string::npos) << r.err;
}

TEST(RegulatePeriodicApp, UnstabilizableIsExit3NamingTheMultiplier) {
  const std::string model = data("per_unstab.toml", R"M(
[system]
states = ["x", "v", "z"]
inputs = ["f"]
period = "pi"
[window]
from = 0
to = "pi"
[matrices]
A = [[0, 1, 0], ["-(1.2 - 0.8*cos(2*t))", 0, 0], [0, 0, 0.2]]
B = [[0], [1], [0]]
)M");
  auto r = run_app("ordex-regulate", "--model " + model + " --periodic --json -");
  EXPECT_EQ(r.exit_code, 3) << r.err;
  // e^{0.2 pi} = 1.8744...
  EXPECT_NE(r.err.find("1.874"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("not stabilizable"), std::string::npos) << r.err;
}

TEST(RegulatePeriodicApp, OrbitOverflowingMonodromyFallsBackAndChecksTheClosedLoop) {
  // Over one orbit (about 5500 s) with the default weights the Hamiltonian monodromy overflows;
  // the passes from P = 0 reach the periodic solution and the closed loop is stable.
  const std::string model = std::string(ORDEX_MODELS_DIR) + "/orbit_relative_motion.toml";
  const nlohmann::json j = app_json("ordex-regulate", "--model " + model + " --periodic --samples 3");
  EXPECT_TRUE(j["floquet"]["stable"].get<bool>());
  EXPECT_LE(j["periodic"]["periodicity_gap"].get<double>(), 1e-6);
  EXPECT_NE(j["periodic"]["note"].get<std::string>().find("overflowed"), std::string::npos);
  // With only the along-track control the cross-track oscillation (multiplier on the unit circle)
  // cannot be stabilized (Hill's equations decouple it): exit 3, one line.
  auto r = run_app("ordex-regulate", "--model " + model + " --periodic --controls ay --samples 3 --json -");
  EXPECT_EQ(r.exit_code, 3) << r.err;
  EXPECT_NE(r.err.find("not stabilizable"), std::string::npos) << r.err;
  EXPECT_EQ(ordex_test::line_count(r.err), 1);
}
