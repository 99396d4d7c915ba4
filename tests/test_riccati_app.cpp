// ordex-regulate end to end: the summary against closed forms, the CSV files, and every kind of
// bad input rejected with exit 2, one line naming the file and key, and no output file left.
#include <gtest/gtest.h>

#include <cmath>
#include <nlohmann/json.hpp>

#include "support.hpp"

using ordex_test::file_exists;
using ordex_test::run_app;
using ordex_test::temp_dir;
using ordex_test::write_file;

namespace {

const std::string kData = std::string(ORDEX_TESTS_DIR) + "/data/";
const double kA = 0.7, kB = 1.5, kQ = 2.0, kR = 0.5;  // tests/data/riccati_scalar*.toml and _weights

// Scalar LQR with Qf = 0: P(t) = q tanh(beta tau) / (beta - a tanh(beta tau)), tau = t1 - t,
// beta = sqrt(a^2 + b^2 q / r) (textbook closed form, from memory; also derived in
// test_riccati_solver.cpp and checked there against the general scalar solution).
double scalar_P(double tau) {
  const double beta = std::sqrt(kA * kA + kB * kB * kQ / kR), th = std::tanh(beta * tau);
  return kQ * th / (beta - kA * th);
}

nlohmann::json run_json(const std::string& args) {
  auto r = run_app("ordex-regulate", args + " --json -");
  EXPECT_EQ(r.exit_code, 0) << r.err;
  return nlohmann::json::parse(r.out);
}

// Tolerances two decades under the checks' 1e-8: the checks compare with the closed form,
// so they must see the solver's accuracy, not its default tolerance.
std::string scalar_args() {
  return "--model " + kData + "riccati_scalar.toml --weights " + kData +
         "riccati_scalar_weights.toml --rtol 1e-10 --atol 1e-12";
}

// Runs with bad input: exit 2, exactly one line "ordex-regulate: error: ..." containing every
// NEEDLE, and neither the requested CSV nor the JSON file exists afterwards.
void expect_input_error(const std::string& args, const std::vector<std::string>& needles) {
  const std::string csv = temp_dir() + "/rejected.csv", json = temp_dir() + "/rejected.json";
  auto r = run_app("ordex-regulate", args + " --csv " + csv + " --json " + json);
  EXPECT_EQ(r.exit_code, 2) << r.err;
  EXPECT_EQ(ordex_test::line_count(r.err), 1) << r.err;
  EXPECT_EQ(r.err.rfind("ordex-regulate: error:", 0), 0u) << r.err;
  for (const auto& n : needles) EXPECT_NE(r.err.find(n), std::string::npos) << "missing '" << n << "' in " << r.err;
  EXPECT_FALSE(file_exists(csv));
  EXPECT_FALSE(file_exists(json));
}

std::string weights_file(const std::string& name, const std::string& text) {
  const std::string path = temp_dir() + "/" + name;
  write_file(path, text);
  return path;
}

}  // namespace

TEST(RegulateApp, ScalarSummaryMatchesClosedForm) {
  auto j = run_json(scalar_args() + " --x0 2");
  const double P0 = scalar_P(3.0);
  EXPECT_NEAR(j["P0"][0][0].get<double>(), P0, 1e-8 * P0);
  EXPECT_NEAR(j["K0"][0][0].get<double>(), kB * P0 / kR, 1e-8 * P0);  // K = R^-1 B' P
  EXPECT_NEAR(j["cost_predicted"].get<double>(), 4 * P0, 1e-8 * P0);
  EXPECT_NEAR(j["cost_simulated"].get<double>(), 4 * P0, 1e-7 * P0);
  // Closed loop x' = (a - b K(t)) x: x_final = x0 exp(int (a - b^2 P / r) dt); with
  // P = r (a + beta)/b^2 near steady state the decay rate is about beta, so x(t1) is small but
  // positive; the engine's closed-loop matrix gives the same x_final.
  const double xf = j["x_final"][0].get<double>();
  EXPECT_GT(xf, 0);
  EXPECT_LT(xf, 2 * std::exp(-2.0));
  EXPECT_NEAR(j["closed_loop"]["phi"][0][0].get<double>() * 2, xf, 1e-7 * xf);
  EXPECT_EQ(j["closed_loop"]["status"], "ok");
  EXPECT_EQ(j["solver"], "ode");  // the default
  EXPECT_EQ(j["app"], "ordex-regulate");
  EXPECT_FALSE(j.contains("floquet"));  // not a periodic model
  EXPECT_NE(j["caution"].get<std::string>().find("Caution"), std::string::npos);
}

TEST(RegulateApp, BothSolversAgreeThroughTheApp) {
  const std::string args = "--model " + kData + "riccati_tv.toml --weights " + kData + "riccati_tv_weights.toml "
                           "--rtol 1e-10 --atol 1e-12";
  auto a = run_json(args + " --solver ode");
  auto b = run_json(args + " --solver hamiltonian");
  EXPECT_EQ(a["method"], "cvode-bdf");
  for (int i = 0; i < 2; ++i)
    for (int k = 0; k < 2; ++k)
      EXPECT_NEAR(a["P0"][i][k].get<double>(), b["P0"][i][k].get<double>(), 1e-8);
}

TEST(RegulateApp, GainScheduleCsvLoadsAndFollowsClosedForm) {
  const std::string csv = temp_dir() + "/gains.csv", pcsv = temp_dir() + "/p.csv", resp = temp_dir() + "/resp.csv";
  auto r = run_app("ordex-regulate", scalar_args() + " --samples 31 --x0 1 --csv " + csv + " --p-csv " + pcsv +
                                         " --response-csv " + resp);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_NE(r.out.find("Caution"), std::string::npos);
  EXPECT_NE(r.out.find("cost simulated"), std::string::npos);
  // numpy reads each file (header row, numbers only).
  auto py = ordex_test::run(std::string(ORDEX_PYTHON) +
                            " -c \"import numpy as np, sys; a = np.loadtxt(sys.argv[1], delimiter=',', skiprows=1);"
                            " print(a.shape[0], a.shape[1]); print(' '.join(repr(v) for v in a[:, 1]))\" " + csv);
  ASSERT_EQ(py.exit_code, 0) << py.err;
  std::istringstream in(py.out);
  int rows = 0, cols = 0;
  in >> rows >> cols;
  EXPECT_EQ(rows, 31);
  EXPECT_EQ(cols, 2);
  for (int k = 0; k < rows; ++k) {
    double K = 0;
    in >> K;
    const double t = 3.0 * k / 30;
    EXPECT_NEAR(K, kB * scalar_P(3.0 - t) / kR, 1e-8) << "t = " << t;
  }
  const std::string header = ordex_test::read_file(csv).substr(0, ordex_test::read_file(csv).find('\n'));
  EXPECT_EQ(header, "t,K_1_1");
  const std::string ph = ordex_test::read_file(pcsv);
  EXPECT_EQ(ph.substr(0, ph.find('\n')), "t,P_1_1");
  EXPECT_EQ(ordex_test::line_count(ordex_test::read_file(resp)), 32);
  const std::string rh = ordex_test::read_file(resp);
  EXPECT_EQ(rh.substr(0, rh.find('\n')), "t,x,u");
}

TEST(RegulateApp, PeriodicModelGivesClosedLoopFloquetMultipliers) {
  // Ten periods: over the first one the gain is the steady-state one to e^-50, so the closed
  // loop a - b K = -beta gives the multiplier exp(-beta T) (constant-coefficient Floquet theory).
  auto j = run_json("--model " + kData + "riccati_scalar_periodic.toml --weights " + kData +
                    "riccati_scalar_weights.toml");
  ASSERT_TRUE(j.contains("floquet")) << j.dump();
  const double beta = std::sqrt(kA * kA + kB * kB * kQ / kR);
  EXPECT_NEAR(j["floquet"]["multipliers"][0]["re"].get<double>(), std::exp(-beta), 1e-8);
  EXPECT_NEAR(j["floquet"]["multipliers"][0]["im"].get<double>(), 0.0, 1e-12);
  EXPECT_TRUE(j["floquet"]["stable"].get<bool>());
  EXPECT_EQ(j["floquet"]["window"][1].get<double>(), 1.0);
}

TEST(RegulateApp, RejectsWeightsOfTheWrongSize) {
  auto w = weights_file("riccati_wrong_size.toml", "Q = [[1, 0], [0, 1]]\n");
  expect_input_error(scalar_args().substr(0, scalar_args().find(" --weights")) + " --weights " + w,
                     {w, "Q", "2 rows, expected 1"});
}

TEST(RegulateApp, RejectsNonSymmetricQ) {
  auto w = weights_file("riccati_nonsym.toml", "Q = [[1, 0.5], [0, 1]]\n");
  expect_input_error("--model " + kData + "riccati_tv.toml --weights " + w, {w + ": Q", "not symmetric"});
}

TEST(RegulateApp, RejectsIndefiniteR) {
  auto w = weights_file("riccati_indef_r.toml", "R = [-1]\n");
  expect_input_error("--model " + kData + "riccati_scalar.toml --weights " + w, {w + ": R", "not positive definite"});
}

TEST(RegulateApp, RejectsAFileThatDoesNotParse) {
  auto w = weights_file("riccati_bad_toml.toml", "Q = [1]\nR = [[1,\n");
  expect_input_error("--model " + kData + "riccati_scalar.toml --weights " + w, {w + ":", "not valid TOML"});
}

TEST(RegulateApp, RejectsUnknownKeyAndBadExpression) {
  auto w = weights_file("riccati_unknown_key.toml", "Qterm = [1]\n");
  expect_input_error("--model " + kData + "riccati_scalar.toml --weights " + w, {w, "unknown key 'Qterm'"});
  auto e = weights_file("riccati_bad_expr.toml", "Q = [[\"1 + omega*t\"]]\n");
  expect_input_error("--model " + kData + "riccati_scalar.toml --weights " + e, {e + ": Q[1][1]", "omega"});
}

TEST(RegulateApp, RejectsIndefiniteQTildeAndNamesFirstFailingTime) {
  // Q - N R^-1 N' = 1 - 4 < 0 everywhere.
  auto w = weights_file("riccati_cross.toml", "Q = [1]\nR = [1]\nN = [[2]]\n");
  expect_input_error("--model " + kData + "riccati_scalar.toml --weights " + w, {"Q - N R^-1 N'", "at t = 0"});
  // Q = 1 - t turns negative just after t = 1 on the window [0, 3]; the dense grid (step
  // 3/2000 = 0.0015) has its first node past 1 at 667 * 0.0015 = 1.0005.
  auto v = weights_file("riccati_late.toml", "Q = [\"1 - t\"]\n");
  expect_input_error("--model " + kData + "riccati_scalar.toml --weights " + v,
                     {v + ": Q", "not positive semidefinite at t = 1.0004"});
}

TEST(RegulateApp, RejectsBadOptions) {
  expect_input_error(scalar_args() + " --x0 1,2", {"--x0", "2 entries"});
  expect_input_error(scalar_args() + " --solver fastest", {"--solver", "fastest"});
  expect_input_error("--model " + kData + "riccati_no_input.toml", {"riccati_no_input.toml", "no inputs"});
  expect_input_error(scalar_args() + " --dense 0", {"--dense"});
  expect_input_error(scalar_args() + " --from 3 --to 0", {"forward"});
  expect_input_error("--model " + kData + "riccati_scalar.toml --weights " + temp_dir() + "/absent.toml",
                     {"absent.toml", "no such weights file"});
}

TEST(RegulateApp, HelpListsTheOptions) {
  auto r = run_app("ordex-regulate", "--help");
  EXPECT_EQ(r.exit_code, 0);
  for (const char* opt : {"--weights", "--solver", "--x0", "--dense", "--p-csv", "--response-csv", "--samples"})
    EXPECT_NE(r.out.find(opt), std::string::npos) << opt;
}

TEST(RegulateApp, FailedClosedLoopCheckIsAWarningAndTheScheduleIsWritten) {
  // A step budget of 100 cannot cover twelve stiff revolutions (tests/data/regulator_stiff_blade.toml):
  // exit 0 as documented in --help, one warning line naming the flag, the gain schedule written,
  // the summary saying the check failed and why, and no half-written run CSV.
  const std::string csv = temp_dir() + "/stiff_gains.csv", json = temp_dir() + "/stiff.json",
                    run = temp_dir() + "/stiff_run.csv";
  auto r = run_app("ordex-regulate", "--model " + kData + "regulator_stiff_blade.toml --x0 0.01,0 --check-steps 100"
                                     " --csv " + csv + " --json " + json + " --response-csv " + run);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_EQ(ordex_test::line_count(r.err), 1) << r.err;
  EXPECT_EQ(r.err.rfind("ordex-regulate: warning: the closed-loop check failed", 0), 0u) << r.err;
  EXPECT_NE(r.err.find("--check-steps"), std::string::npos) << r.err;
  EXPECT_EQ(ordex_test::line_count(ordex_test::read_file(csv)), 102);  // header + 101 times
  EXPECT_FALSE(file_exists(run));
  auto j = nlohmann::json::parse(ordex_test::read_file(json));
  EXPECT_EQ(j["closed_loop"]["status"], "failed");
  EXPECT_FALSE(j["closed_loop"]["reason"].get<std::string>().empty());
  EXPECT_EQ(j["gain_schedule"]["K"].size(), 101u);
  auto h = run_app("ordex-regulate", "--help");
  EXPECT_NE(h.out.find("--check-steps"), std::string::npos);
  EXPECT_NE(h.out.find("also 0 when the closed-loop check fails"), std::string::npos);
}
