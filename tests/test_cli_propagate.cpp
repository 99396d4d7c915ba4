// ordex-propagate as a user runs it: outputs per CONTRACT.md and every error class (exit code,
// one-line message naming file/key/option, no partial output file).
#include <gtest/gtest.h>

#include <nlohmann/json.hpp>
#include <sstream>

#include "support.hpp"

using ordex_test::run_app;
using ordex_test::model_path;

namespace {

std::string data(const std::string& name) { return std::string(ORDEX_TESTS_DIR) + "/data/" + name; }

void expect_error(const ordex_test::RunResult& r, int code, const std::string& needle) {
  EXPECT_EQ(r.exit_code, code) << r.err;
  EXPECT_EQ(ordex_test::line_count(r.err), 1) << r.err;
  EXPECT_EQ(r.err.rfind("ordex-propagate: error: ", 0), 0u) << r.err;
  EXPECT_NE(r.err.find(needle), std::string::npos) << "expected '" << needle << "' in: " << r.err;
}

}  // namespace

TEST(CliPropagate, HelpAndVersion) {
  auto r = run_app("ordex-propagate", "--help");
  EXPECT_EQ(r.exit_code, 0);
  EXPECT_NE(r.out.find("--floquet"), std::string::npos);
  EXPECT_NE(r.out.find("--model"), std::string::npos);
  r = run_app("ordex-propagate", "--version");
  EXPECT_EQ(r.exit_code, 0);
  EXPECT_NE(r.out.find("ordex"), std::string::npos);
}

TEST(CliPropagate, JsonAndCsvFollowTheContract) {
  std::string csv = ordex_test::temp_dir() + "/prop.csv";
  auto r = run_app("ordex-propagate", "--model " + model_path("mathieu.toml") +
                                          " --set a=2.5 --set q=0.8 --samples 11 --json - --csv " + csv);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  auto j = nlohmann::json::parse(r.out);  // with --json -, standard output is only the JSON
  for (const char* key : {"app", "t0", "t1", "states", "method", "steps", "matrix_evaluations", "phi",
                          "error_estimate", "liouville"})
    EXPECT_TRUE(j.contains(key)) << key;
  EXPECT_EQ(j["phi"].size(), 2u);
  EXPECT_EQ(j["phi"][0].size(), 2u);
  EXPECT_NEAR(j["t1"].get<double>(), M_PI, 1e-15);
  // Liouville: the Mathieu equation has trace zero, so det Phi = 1.
  EXPECT_NEAR(j["liouville"]["det_phi"].get<double>(), 1.0, 1e-9);
  std::istringstream in(ordex_test::read_file(csv));
  std::string line;
  std::getline(in, line);
  EXPECT_EQ(line, "t,phi_1_1,phi_1_2,phi_2_1,phi_2_2");
  int rows = 0;
  std::string last;
  while (std::getline(in, line)) { ++rows; last = line; }
  EXPECT_EQ(rows, 11);
  // The last CSV row is Phi(t1, t0), the same as the JSON's phi.
  double t, p11;
  char comma;
  std::istringstream(last) >> t >> comma >> p11;
  EXPECT_NEAR(p11, j["phi"][0][0].get<double>(), 1e-12 * std::max(1.0, std::abs(p11)));
}

TEST(CliPropagate, FloquetOnThePumpedOscillator) {
  // Stable point of the Mathieu chart: a = 2.5, q = 0.8 lies between the first two instability
  // tongues (A&S ch. 20, Fig. 20.1, from memory), so |mu| = 1 for both multipliers on the
  // undamped equation; unstable inside the first tongue: a = 1, q = 0.5 lies between a_1 and
  // b_1 (a_1(0.5) ~ 1.46 and b_1(0.5) ~ 0.47, scipy.special.mathieu_a/b).
  auto r = run_app("ordex-propagate", "--model " + model_path("mathieu.toml") + " --set a=1 --set q=0.5 --floquet --json -");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  auto j = nlohmann::json::parse(r.out);
  EXPECT_FALSE(j["floquet"]["stable"].get<bool>());
  EXPECT_GT(j["floquet"]["multipliers"][0]["abs"].get<double>(), 1.0);
  EXPECT_NEAR(j["floquet"]["period"].get<double>(), M_PI, 1e-15);
  r = run_app("ordex-propagate", "--model " + model_path("mathieu.toml") + " --set a=2.5 --set q=0.8 --floquet --json -");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  j = nlohmann::json::parse(r.out);
  EXPECT_NEAR(j["floquet"]["multipliers"][0]["abs"].get<double>(), 1.0, 1e-8);
}

TEST(CliPropagate, BadUsageIsExitTwo) {
  expect_error(run_app("ordex-propagate", "--model " + model_path("mathieu.toml") + " --bogus"), 2, "bogus");
  expect_error(run_app("ordex-propagate", ""), 2, "--model");
  expect_error(run_app("ordex-propagate", "--model /nonexistent/m.toml"), 2, "/nonexistent/m.toml");
  expect_error(run_app("ordex-propagate", "--model " + model_path("mathieu.toml") + " --method rk4"), 2, "rk4");
  expect_error(run_app("ordex-propagate", "--model " + model_path("mathieu.toml") + " --set nope=1"), 2, "nope");
  expect_error(run_app("ordex-propagate", "--model " + model_path("mathieu.toml") + " --rtol 0"), 2, "--rtol");
  expect_error(run_app("ordex-propagate", "--model " + data("cli_no_window.toml")), 2, "window");
  expect_error(run_app("ordex-propagate", "--model " + data("cli_no_window.toml") + " --from 0 --to 1 --floquet"), 2, "period");
  expect_error(run_app("ordex-propagate", "--model " + data("cli_unknown_symbol.toml")), 2, "omeg");
  expect_error(run_app("ordex-propagate", "--model " + data("cli_bad_syntax.toml")), 2, "cli_bad_syntax.toml");
  expect_error(run_app("ordex-propagate", "--model " + model_path("mathieu.toml") + " --samples 1"), 2, "--samples");
  // A tabulated model's bad CSV: the error names the CSV file and its line.
  expect_error(run_app("ordex-propagate", "--model " + data("cli_table_bad.toml")), 2, "cli_table_bad.csv:4");
}

TEST(CliPropagate, NumericalFailureIsExitThreeWithNoOutputFile) {
  for (const char* method : {"magnus6", "adams", "bdf"}) {
    std::string csv = ordex_test::temp_dir() + "/blowup_" + method + ".csv";
    std::string json = ordex_test::temp_dir() + "/blowup_" + method + ".json";
    auto r = run_app("ordex-propagate", "--model " + data("cli_blowup.toml") + " --method " + method +
                                            " --csv " + csv + " --json " + json);
    expect_error(r, 3, "t =");
    EXPECT_FALSE(ordex_test::file_exists(csv)) << method;
    EXPECT_FALSE(ordex_test::file_exists(json)) << method;
  }
}

TEST(CliPropagate, StrayArgumentsAndWindowsOutsideTheDataAreBadInput) {
  expect_error(run_app("ordex-propagate", "--model " + model_path("mathieu.toml") + " stray"), 2, "stray");
  // The vehicle model's speed table covers [0, 20] s and refuses to extrapolate: a longer
  // window fails before any work, naming the window and the table.
  expect_error(run_app("ordex-propagate", "--model " + model_path("vehicle_lateral.toml") + " --from 0 --to 1000"),
               2, "vehicle_speed.csv");
}

TEST(CliPropagate, CsvToStandardOutputIsOnlyTheCsv) {
  auto r = run_app("ordex-propagate", "--model " + model_path("mathieu.toml") + " --samples 3 --csv -");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_EQ(ordex_test::line_count(r.out), 4) << r.out;  // header and three rows, no report
  EXPECT_EQ(r.out.rfind("t,phi_1_1", 0), 0u);
}
