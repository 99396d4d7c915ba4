// ordex-gramian end to end: the JSON of CONTRACT.md, the chain with ordex-respond through
// --input-out, the sliding-window CSV, the orbit scenario's rank with thrust axes removed, and
// bad input (exit 2, one line naming the option or key, no output file left behind).
#include <gtest/gtest.h>

#include <cmath>
#include <nlohmann/json.hpp>
#include <sstream>

#include "support.hpp"

namespace {

using ordex_test::file_exists;
using ordex_test::line_count;
using ordex_test::run_app;

const std::string kDir = ORDEX_TESTS_DIR "/data/";
const std::string kCart = "--model " + kDir + "gramian_double_integrator.toml";
const std::string kOrbit = "--model " + std::string(ORDEX_MODELS_DIR) + "/orbit_relative_motion.toml";

nlohmann::ordered_json json_of(const ordex_test::RunResult& r) { return nlohmann::ordered_json::parse(r.out); }

void expect_input_error(const std::string& args, const std::string& needle, int code = 2) {
  const std::string out = ordex_test::temp_dir() + "/gramian_err.json";
  const std::string csv = ordex_test::temp_dir() + "/gramian_err.csv";
  auto r = run_app("ordex-gramian", args + " --json " + out + " --csv " + csv);
  EXPECT_EQ(r.exit_code, code) << args << "\n" << r.err;
  EXPECT_EQ(line_count(r.err), 1) << r.err;
  EXPECT_EQ(r.err.rfind("ordex-gramian: error:", 0), 0u) << r.err;
  EXPECT_NE(r.err.find(needle), std::string::npos) << "expected '" << needle << "' in: " << r.err;
  EXPECT_EQ(r.err.find("Options::"), std::string::npos) << r.err;  // flags, not library field names
  EXPECT_FALSE(file_exists(out));
  EXPECT_FALSE(file_exists(csv));
}

TEST(GramianApp, JsonHasTheContractKeysAndTheClosedForm) {
  auto r = run_app("ordex-gramian", kCart + " --kind reachability --xf 1,0 --json -");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  auto j = json_of(r);
  for (const char* key : {"kind", "t0", "t1", "gramian", "eigenvalues", "condition", "rank", "full_rank",
                          "weakest_direction", "transfer"})
    EXPECT_TRUE(j.contains(key)) << key;
  for (const char* key : {"energy", "final_error", "peak_input"}) EXPECT_TRUE(j["transfer"].contains(key)) << key;
  EXPECT_EQ(j["kind"], "reachability");
  // The common header first (CONTRACT.md): app, version, model with its parameters, window, method.
  EXPECT_EQ(j.begin().key(), "app");
  EXPECT_EQ(j["app"], "ordex-gramian");
  EXPECT_EQ(j["model"]["title"], "Cart on a frictionless rail (test model)");
  EXPECT_EQ(j["model"]["parameters"]["gain"].get<double>(), 1.0);
  EXPECT_TRUE(j.contains("ordex_version"));
  // x'' = u over [0, 2]: W_r = [[8/3, 2], [2, 2]], rest-to-rest energy 12/T^3 = 1.5 (closed form).
  EXPECT_NEAR(j["gramian"][0][0].get<double>(), 8.0 / 3, 1e-9);
  EXPECT_NEAR(j["gramian"][0][1].get<double>(), 2.0, 1e-9);
  EXPECT_NEAR(j["gramian"][1][1].get<double>(), 2.0, 1e-9);
  EXPECT_NEAR(j["transfer"]["energy"].get<double>(), 1.5, 1e-9);
  EXPECT_LT(j["transfer"]["final_error"].get<double>(), 1e-8);
  EXPECT_TRUE(j["full_rank"].get<bool>());
  const double e0 = j["eigenvalues"][0].get<double>(), e1 = j["eigenvalues"][1].get<double>();
  EXPECT_LT(e0, e1);
  EXPECT_NEAR(j["condition"].get<double>(), e1 / e0, 1e-9 * e1 / e0);
  auto human = run_app("ordex-gramian", kCart + " --xf 1,0");
  EXPECT_NE(human.out.find("Caution"), std::string::npos);  // steering inputs: hardware caution
}

TEST(GramianApp, RoutesAgreeOnTheOrbitModel) {
  for (const char* kind : {"controllability", "observability"}) {
    auto a = run_app("ordex-gramian", kOrbit + " --kind " + kind + " --rtol 1e-10 --atol 1e-14 --json -");
    auto b = run_app("ordex-gramian", kOrbit + " --kind " + kind + " --route lyapunov --rtol 1e-10 --atol 1e-14 --json -");
    ASSERT_EQ(a.exit_code, 0) << a.err;
    ASSERT_EQ(b.exit_code, 0) << b.err;
    auto ea = json_of(a)["eigenvalues"], eb = json_of(b)["eigenvalues"];
    for (int i = 0; i < 6; ++i)
      EXPECT_NEAR(ea[i].get<double>(), eb[i].get<double>(), 1e-6 * std::abs(eb[i].get<double>())) << kind << " " << i;
  }
}

TEST(GramianApp, OrbitThrustAxesDecideTheRank) {
  // Without cross-track thrust the cross-track pair (z, vz) cannot be moved (it is decoupled
  // from the in-plane motion in the linearized equations): rank 4, weakest direction in (z, vz).
  auto full = json_of(run_app("ordex-gramian", kOrbit + " --json -"));
  EXPECT_EQ(full["rank"], 6);
  for (const char* sets : {"--set kz=0", "--set kz=0 --set kx=0"}) {
    auto j = json_of(run_app("ordex-gramian", kOrbit + " " + sets + " --json -"));
    EXPECT_EQ(j["rank"], 4) << sets;
    EXPECT_FALSE(j["full_rank"].get<bool>());
    const auto& w = j["weakest_direction"];
    EXPECT_NEAR(std::hypot(w[2].get<double>(), w[5].get<double>()), 1.0, 1e-9) << sets;
    EXPECT_EQ(j["missing_directions"].size(), 2u);
  }
  // A transfer cannot invert the rank-4 Gramian: exit 3 naming the direction and eigenvalue,
  // and no input file.
  const std::string u = ordex_test::temp_dir() + "/gramian_singular_u.csv";
  auto r = run_app("ordex-gramian", kOrbit + " --set kz=0 --xf 0,-0.2,0,0,0,0 --x0 0,-2,0,0,0,0 --input-out " + u);
  EXPECT_EQ(r.exit_code, 3);
  EXPECT_EQ(line_count(r.err), 1) << r.err;
  EXPECT_NE(r.err.find("weakest direction (x 0, y 0, z"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("eigenvalue"), std::string::npos) << r.err;
  EXPECT_FALSE(file_exists(u));
}

TEST(GramianApp, InputOutChainsWithRespond) {
  if (!file_exists(std::string(ORDEX_BIN_DIR) + "/ordex-respond"))
    GTEST_SKIP() << "ordex-respond is not built in this build tree";
  const std::string u = ordex_test::temp_dir() + "/gramian_orbit_u.csv";
  auto g = run_app("ordex-gramian", kOrbit + " --to 4000 --samples 401 --x0 0,-2,0,0,0,0 --xf 0,-0.2,0,0,0,0 "
                                    "--input-out " + u + " --json -");
  ASSERT_EQ(g.exit_code, 0) << g.err;
  auto j = json_of(g);
  const std::string header = ordex_test::read_file(u).substr(0, ordex_test::read_file(u).find('\n'));
  EXPECT_EQ(header, "t,ax,ay,az");
  auto r = run_app("ordex-respond", kOrbit + " --to 4000 --input " + u + " --x0 0,-2,0,0,0,0 --json -");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  auto x = json_of(r)["x_final"];
  const double xf[6] = {0, -0.2, 0, 0, 0, 0};
  double err = 0;
  for (int i = 0; i < 6; ++i) err += std::pow(x[i].get<double>() - xf[i], 2);
  err = std::sqrt(err);
  // ordex-respond holds the samples linearly, as the sampled replay does: same miss, and a
  // small one (well under a metre of the 1.8 km move).
  const double predicted = j["transfer"]["final_error_sampled_input"].get<double>();
  EXPECT_NEAR(err, predicted, 1e-3 * predicted + 1e-9);
  EXPECT_LT(err, 1e-3);
}

TEST(GramianApp, SlidingWindowCsv) {
  const std::string csv = ordex_test::temp_dir() + "/gramian_profile.csv";
  auto r = run_app("ordex-gramian", kCart + " --window-length 0.5 --stride 0.25 --csv " + csv + " --json -");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  std::istringstream in(ordex_test::read_file(csv));
  std::string line;
  std::getline(in, line);
  EXPECT_EQ(line, "t_start,t_end,lambda_min,lambda_max,condition,rank");
  int rows = 0;
  // A constant pair: every window is the Gramian over L = 0.5, W_c = [[L^3/3, -L^2/2],
  // [-L^2/2, L]] (closed form); its eigenvalues from the 2x2 formula.
  const double L = 0.5, a = L * L * L / 3, b = -L * L / 2, c = L;
  const double mid = (a + c) / 2, rad = std::sqrt((a - c) * (a - c) / 4 + b * b);
  while (std::getline(in, line)) {
    double v[6];
    char comma;
    std::istringstream row(line);
    row >> v[0] >> comma >> v[1] >> comma >> v[2] >> comma >> v[3] >> comma >> v[4] >> comma >> v[5];
    EXPECT_NEAR(v[0], 0.25 * rows, 1e-12);
    EXPECT_NEAR(v[1] - v[0], L, 1e-12);
    EXPECT_NEAR(v[2], mid - rad, 1e-9 * (mid + rad));
    EXPECT_NEAR(v[3], mid + rad, 1e-9 * (mid + rad));
    EXPECT_EQ(v[5], 2);
    ++rows;
  }
  EXPECT_EQ(rows, 7);  // starts 0, 0.25, ..., 1.5
  EXPECT_EQ(json_of(r)["profile"]["windows"], 7);
}

TEST(GramianApp, BadInputIsExitTwoWithOneLine) {
  expect_input_error(kCart + " --xf 1,2,3", "--xf: 3 entries");
  expect_input_error(kCart + " --xf 1,0 --x0 1", "--x0: 1 entries");
  expect_input_error(kCart + " --x0 1,0", "--x0: needs --xf");
  expect_input_error(kCart + " --kind sideways", "--kind: unknown kind 'sideways'");
  expect_input_error(kCart + " --route around", "--route: unknown route");
  expect_input_error(kCart + " --kind observability", "gramian_double_integrator.toml: system.outputs");
  expect_input_error("--model " + kDir + "gramian_no_input.toml", "gramian_no_input.toml: system.inputs");
  expect_input_error(kCart + " --rank-tol 0", "--rank-tol: 0 is outside (0, 1)");
  expect_input_error(kCart + " --threads 0", "--threads: 0 is outside [1, 64]");
  expect_input_error(kCart + " --rtol 2", "--rtol: 2 is outside");
  expect_input_error(kCart + " --window-length 3", "--window-length");
  expect_input_error(kCart + " --window-length 1 --stride -1", "--stride");
  expect_input_error(kCart + " --set mass=2", "mass");
  expect_input_error(kCart + " --from 1 --to 0", "--from");
  expect_input_error(kCart + " --no-such-option", "no-such-option");
  expect_input_error("--model " + kDir + "gramian_missing.toml", "gramian_missing.toml");
  // The singular transfer is a numerical failure (exit 3), also without leftovers.
  expect_input_error(kOrbit + " --set kz=0 --xf 0,-0.2,0,0,0,0", "too ill-conditioned", 3);
}

}  // namespace

TEST(GramianApp, RunningGramianCsvAgainstTheClosedForm) {
  // The running reachability Gramian of p'' = f: W_r(0, t) = [[t^3/3, t^2/2], [t^2/2, t]]
  // (closed form), one row a sample.
  const std::string csv = ordex_test::temp_dir() + "/gramian_running.csv";
  auto r = run_app("ordex-gramian", kCart + " --kind reachability --samples 5 --csv " + csv);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  std::istringstream in(ordex_test::read_file(csv));
  std::string line;
  std::getline(in, line);
  EXPECT_EQ(line, "t,W_1_1,W_1_2,W_2_1,W_2_2");
  int rows = 0;
  while (std::getline(in, line)) {
    double t, w11, w12, w21, w22;
    char comma;
    std::istringstream(line) >> t >> comma >> w11 >> comma >> w12 >> comma >> w21 >> comma >> w22;
    EXPECT_NEAR(t, 0.5 * rows, 1e-15);
    EXPECT_NEAR(w11, t * t * t / 3, 1e-9);
    EXPECT_NEAR(w12, t * t / 2, 1e-9);
    EXPECT_NEAR(w22, t, 1e-9);
    ++rows;
  }
  EXPECT_EQ(rows, 5);
}

TEST(GramianApp, AnOutputNamingTheModelIsRefused) {
  const std::string model = ordex_test::temp_dir() + "/gramian_cart_copy.toml";
  ordex_test::write_file(model, ordex_test::read_file(kDir + "gramian_double_integrator.toml"));
  const std::string before = ordex_test::read_file(model);
  auto r = run_app("ordex-gramian", "--model " + model + " --json " + model);
  EXPECT_EQ(r.exit_code, 2) << r.err;
  EXPECT_EQ(ordex_test::read_file(model), before);  // the input is intact
}
