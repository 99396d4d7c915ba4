// ordex-estimate end to end: the filter's summary and CSV files against the scalar closed form,
// the demo's covariance analysis with its files loaded by numpy, and bad input rejected with
// exit 2, one line naming the file and key, and no output file left.
#include <gtest/gtest.h>

#include <cmath>
#include <nlohmann/json.hpp>
#include <sstream>

#include "support.hpp"

using ordex_test::file_exists;
using ordex_test::run_app;
using ordex_test::temp_dir;
using ordex_test::write_file;

namespace {

std::string file(const std::string& name, const std::string& text) {
  const std::string path = temp_dir() + "/" + name;
  write_file(path, text);
  return path;
}

// x' = a x + w (through the input "w"), y = c x; Qn = q, Rn = r, P0 = p0.
const double kA = -0.4, kC = 2.0, kQ = 0.3, kR = 0.1, kP0 = 0.05;

std::string scalar_model() {
  return file("est_scalar.toml", "[system]\nstates = [\"x\"]\ninputs = [\"w\"]\noutputs = [\"y\"]\n"
                                 "[window]\nfrom = 0\nto = 2\n[matrices]\nA = [[-0.4]]\nB = [[1]]\nC = [[2]]\n");
}

std::string scalar_noise() { return file("est_scalar_noise.toml", "through = [\"w\"]\nQn = [[0.3]]\nRn = [0.1]\nP0 = [0.05]\n"); }

// The scalar closed form p = a/s + (beta/s) tanh(beta t + atanh((s p0 - a)/beta)), s = c^2/r,
// beta = sqrt(a^2 + s q): derived in test_estimation_filter.cpp.
double scalar_P(double t) {
  const double s = kC * kC / kR, beta = std::sqrt(kA * kA + s * kQ);
  return kA / s + beta / s * std::tanh(beta * t + std::atanh((s * kP0 - kA) / beta));
}

const std::string kDemo = "--model " + ordex_test::model_path("sled_depth.toml") + " --noise " +
                          ordex_test::model_path("sled_depth_noise.toml");

void expect_input_error(const std::string& args, const std::vector<std::string>& needles) {
  const std::string csv = temp_dir() + "/rejected.csv", json = temp_dir() + "/rejected.json",
                    sig = temp_dir() + "/rejected_sigma.csv";
  auto r = run_app("ordex-estimate", args + " --csv " + csv + " --json " + json + " --sigma-csv " + sig);
  EXPECT_EQ(r.exit_code, 2) << r.err;
  EXPECT_EQ(ordex_test::line_count(r.err), 1) << r.err;
  EXPECT_EQ(r.err.rfind("ordex-estimate: error:", 0), 0u) << r.err;
  for (const auto& n : needles) EXPECT_NE(r.err.find(n), std::string::npos) << "missing '" << n << "' in " << r.err;
  EXPECT_FALSE(file_exists(csv));
  EXPECT_FALSE(file_exists(json));
  EXPECT_FALSE(file_exists(sig));
}

}  // namespace

TEST(EstimateApp, FilterSummaryAndCsvFollowTheClosedForm) {
  const std::string csv = temp_dir() + "/est_gain.csv", sig = temp_dir() + "/est_sigma.csv";
  auto r = run_app("ordex-estimate", "--model " + scalar_model() + " --noise " + scalar_noise() +
                                         " --samples 21 --rtol 1e-10 --atol 1e-12 --json - --csv " + csv +
                                         " --sigma-csv " + sig);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const auto j = nlohmann::json::parse(r.out);
  EXPECT_EQ(j["app"], "ordex-estimate");
  EXPECT_EQ(j["kind"], "kalman-bucy");
  EXPECT_NEAR(j["P_final"][0][0].get<double>(), scalar_P(2.0), 1e-8);
  EXPECT_NEAR(j["L0"][0][0].get<double>(), kP0 * kC / kR, 1e-12);
  EXPECT_NEAR(j["sigma_final"][0].get<double>(), std::sqrt(scalar_P(2.0)), 1e-8);
  EXPECT_LT(j["cross_check"]["agreement"].get<double>(), 1e-7);
  EXPECT_TRUE(j.contains("caution"));
  EXPECT_TRUE(j["model"].contains("parameters"));
  // numpy loads both files by their header names.
  auto py = ordex_test::run(std::string(ORDEX_PYTHON) +
                            " -c \"import numpy as np, sys; g = np.genfromtxt(sys.argv[1], delimiter=',', names=True);"
                            " s = np.genfromtxt(sys.argv[2], delimiter=',', names=True);"
                            " print(' '.join(g.dtype.names), len(g)); print(' '.join(s.dtype.names), len(s));"
                            " print(' '.join(repr(v) for v in g['L_1_1']))\" " + csv + " " + sig);
  ASSERT_EQ(py.exit_code, 0) << py.err;
  std::istringstream in(py.out);
  std::string t, l, sig_t, sig_x;
  int rows = 0, srows = 0;
  in >> t >> l >> rows >> sig_t >> sig_x >> srows;
  EXPECT_EQ(t + "," + l, "t,L_1_1");
  EXPECT_EQ(sig_t + "," + sig_x, "t,sigma_x");
  EXPECT_EQ(rows, 21);
  EXPECT_EQ(srows, 21);
  for (int k = 0; k < rows; ++k) {
    double L = 0;
    in >> L;
    const double time = 2.0 * k / 20;
    EXPECT_NEAR(L, scalar_P(time) * kC / kR, 1e-7 * scalar_P(time) * kC / kR) << "t = " << time;
  }
}

TEST(EstimateApp, DemoCovarianceAnalysisWritesLoadableFiles) {
  const std::string csv = temp_dir() + "/sled_gain.csv", sig = temp_dir() + "/sled_sigma.csv",
                    json = temp_dir() + "/sled.json";
  auto r = run_app("ordex-estimate", kDemo + " --measurements " + ordex_test::model_path("sled_depth_sensors.toml") +
                                         " --csv " + csv + " --sigma-csv " + sig + " --json " + json);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_NE(r.out.find("covariance analysis"), std::string::npos) << r.out;
  const auto j = nlohmann::json::parse(ordex_test::read_file(json));
  EXPECT_EQ(j["kind"], "covariance-analysis");
  EXPECT_EQ(j["schedule"]["updates"], 16);  // 13 gauge readings (0, 5, ..., 60) and 3 fixes
  ASSERT_EQ(j["sigma_final"].size(), 2u);
  ASSERT_EQ(j["L0"].size(), 2u);     // states x outputs
  ASSERT_EQ(j["L0"][0].size(), 2u);
  EXPECT_EQ(j["L0"][0][1], 0.0);     // the first update reads the gauge alone
  auto py = ordex_test::run(std::string(ORDEX_PYTHON) +
                            " -c \"import numpy as np, sys; g = np.genfromtxt(sys.argv[1], delimiter=',', names=True);"
                            " s = np.genfromtxt(sys.argv[2], delimiter=',', names=True);"
                            " print(len(g), len(g.dtype.names), ' '.join(s.dtype.names));"
                            " print(bool(np.all(np.diff(s['t']) >= 0)), repr(s['sigma_depth'][-1]))\" " + csv + " " + sig);
  ASSERT_EQ(py.exit_code, 0) << py.err;
  std::istringstream in(py.out);
  int rows = 0, cols = 0;
  std::string n1, n2, n3, sorted;
  double last = 0;
  in >> rows >> cols >> n1 >> n2 >> n3 >> sorted >> last;
  EXPECT_EQ(rows, 16);
  EXPECT_EQ(cols, 5);  // t and the 2 x 2 gain
  EXPECT_EQ(n1 + " " + n2 + " " + n3, "t sigma_depth sigma_rate");
  EXPECT_EQ(sorted, "True");
  EXPECT_NEAR(last, j["sigma_final"][0].get<double>(), 1e-12 * last);
}

TEST(EstimateApp, RejectsBadNoiseFiles) {
  const std::string model = "--model " + ordex_test::model_path("sled_depth.toml") + " --noise ";
  expect_input_error(model + file("n1.toml", "through = [\"heave\"]\nQn = [[-0.1]]\nRn = [1, 1]\nP0 = [1, 1]\n"),
                     {"n1.toml: Qn", "not positive semidefinite"});
  expect_input_error(model + file("n2.toml", "G = [[1, 0], [0, 1]]\nQn = [[1, 0.5], [0.2, 1]]\nRn = [1, 1]\nP0 = [1, 1]\n"),
                     {"n2.toml: Qn", "not symmetric"});
  expect_input_error(model + file("n3.toml", "through = [\"heave\"]\nQn = [1]\nRn = [[1, 1], [1, 1]]\nP0 = [1, 1]\n"),
                     {"n3.toml: Rn", "not positive definite"});
  expect_input_error(model + file("n4.toml", "through = [\"gust\"]\nQn = [1]\nRn = [1, 1]\nP0 = [1, 1]\n"),
                     {"n4.toml: through[1]", "no input 'gust'"});
  expect_input_error(model + file("n5.toml", "through = [\"heave\"]\nQn = [1]\nRn = [1, 1]\nP0 = [1, 1, 1]\n"),
                     {"n5.toml: P0", "the diagonal has 3 entries, expected 2"});
  expect_input_error(model + file("n6.toml", "through = [\"heave\"]\nQn = [1]\nP0 = [1, 1]\n"), {"Rn: missing"});
  expect_input_error(model + file("n7.toml", "through = [\"heave\"]\nQn = [1]\nRn = [1, 1]\nP0 = [1, 1]\nQ = 3\n"),
                     {"n7.toml: unknown key 'Q'"});
  expect_input_error("--model " + ordex_test::model_path("sled_depth.toml"), {"--noise is required"});
}

TEST(EstimateApp, RejectsBadSensorSchedules) {
  expect_input_error(kDemo + " --measurements " +
                         file("s1.toml", "[[measurement]]\noutputs = [\"depth_gauge\"]\ntimes = [5, 75]\nRn = [0.1]\n"),
                     {"s1.toml: measurement[1].times[2]", "outside the window [0, 60]"});
  expect_input_error(kDemo + " --measurements " +
                         file("s2.toml", "[[measurement]]\noutputs = [\"range\"]\nevery = 5\nRn = [0.1]\n"),
                     {"s2.toml: measurement[1].outputs[1]", "no output 'range'"});
  expect_input_error(kDemo + " --measurements " +
                         file("s3.toml", "[[measurement]]\noutputs = [\"depth_gauge\"]\nevery = 5\nRn = [0.1]\n"
                                         "[[measurement]]\noutputs = [\"depth_gauge\", \"rate_gyro\"]\ntimes = [3]\n"
                                         "Rn = [[1, 1], [1, 1]]\n"),
                     {"measurement[2].Rn", "not positive definite"});
  expect_input_error(kDemo + " --measurements " +
                         file("s4.toml", "[[measurement]]\noutputs = [\"depth_gauge\"]\nevery = 5\nRn = [0.1, 0.2]\n"),
                     {"s4.toml: measurement[1].Rn", "the diagonal has 2 entries, expected 1"});
  expect_input_error(kDemo + " --measurements " +
                         file("s5.toml", "[[measurement]]\noutputs = [\"depth_gauge\"]\nRn = [0.1]\n"),
                     {"s5.toml: measurement[1]", "times", "every"});
}

TEST(EstimateApp, HelpListsTheOptions) {
  auto r = run_app("ordex-estimate", "--help");
  ASSERT_EQ(r.exit_code, 0);
  for (const char* flag : {"--noise", "--measurements", "--solver", "--sigma-csv", "--no-cross-check", "--dense"})
    EXPECT_NE(r.out.find(flag), std::string::npos) << flag;
}

TEST(EstimateApp, NumericalFailureExitsThreeWithoutOutput) {
  // An unobserved (C = 0) fast-growing state: P grows like exp(800 t) and overflows near t = 0.88.
  const std::string model = file("est_blow.toml", "[system]\nstates = [\"x\"]\ninputs = [\"w\"]\noutputs = [\"y\"]\n"
                                                  "[window]\nfrom = 0\nto = 10\n[matrices]\nA = [[400]]\nB = [[1]]\n"
                                                  "C = [[0]]\n");
  const std::string noise = file("est_blow_noise.toml", "through = [\"w\"]\nQn = [1]\nRn = [1]\nP0 = [1]\n");
  const std::string json = temp_dir() + "/blow.json", csv = temp_dir() + "/blow.csv";
  auto r = run_app("ordex-estimate", "--model " + model + " --noise " + noise + " --json " + json + " --csv " + csv);
  EXPECT_EQ(r.exit_code, 3) << r.err;
  EXPECT_EQ(ordex_test::line_count(r.err), 1) << r.err;
  EXPECT_NE(r.err.find("not finite"), std::string::npos) << r.err;
  EXPECT_FALSE(file_exists(json));
  EXPECT_FALSE(file_exists(csv));
}

TEST(EstimateApp, OutputsNamingTheNoiseFileOrScheduleAreRefused) {
  const std::string noise = file("keep_noise.toml", "through = [\"heave\"]\nQn = [0.01]\nRn = [0.05, 0.004]\nP0 = [1, 1]\n");
  const std::string plan = file("keep_plan.toml", "[[measurement]]\noutputs = [\"depth_gauge\"]\nevery = 10\nRn = [0.1]\n");
  const std::string before_noise = ordex_test::read_file(noise), before_plan = ordex_test::read_file(plan);
  const std::string args = "--model " + ordex_test::model_path("sled_depth.toml") + " --noise " + noise +
                           " --measurements " + plan;
  for (const std::string& out : {" --csv " + noise, " --sigma-csv " + plan, " --json " + noise}) {
    auto r = run_app("ordex-estimate", args + out);
    EXPECT_EQ(r.exit_code, 2) << out << "\n" << r.err;
    EXPECT_NE(r.err.find("is an input of this run"), std::string::npos) << r.err;
  }
  EXPECT_EQ(ordex_test::read_file(noise), before_noise);
  EXPECT_EQ(ordex_test::read_file(plan), before_plan);
}

TEST(EstimateApp, FailedCrossCheckIsAWarningAndTheResultsAreWritten) {
  // A fast stable state (a = -400) and one Hamiltonian interval over the whole window: the
  // Hamiltonian's exp(400 t) overflows, the ODE route does not. Steady state of the scalar
  // filter: p = (a + sqrt(a^2 + c^2 q / r)) r / c^2 (test_estimation_filter.cpp).
  const std::string model = file("est_fast.toml", "[system]\nstates = [\"x\"]\ninputs = [\"w\"]\noutputs = [\"y\"]\n"
                                                  "[window]\nfrom = 0\nto = 10\n[matrices]\nA = [[-400]]\nB = [[1]]\n"
                                                  "C = [[1]]\n");
  const std::string noise = file("est_fast_noise.toml", "through = [\"w\"]\nQn = [1]\nRn = [1]\nP0 = [1]\n");
  auto r = run_app("ordex-estimate", "--model " + model + " --noise " + noise + " --samples 2 --dense 1 --json -");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_EQ(ordex_test::line_count(r.err), 1) << r.err;
  EXPECT_EQ(r.err.rfind("ordex-estimate: warning: the cross-check", 0), 0u) << r.err;
  const auto j = nlohmann::json::parse(r.out);
  EXPECT_EQ(j["cross_check"]["status"], "failed");
  EXPECT_TRUE(j["cross_check"]["agreement"].is_null());
  EXPECT_NEAR(j["P_final"][0][0].get<double>(), -400 + std::sqrt(160001.0), 1e-9);
}
