// ordex-propagate as a user runs it: outputs per CONTRACT.md and every error class (exit code,
// one-line message naming file/key/option, no partial output file).
#include <gtest/gtest.h>

#include <algorithm>
#include <nlohmann/json.hpp>
#include <sstream>
#include <vector>

#include "common/front_end.hpp"

#include "support.hpp"

using ordex_test::run_app;
using ordex_test::model_path;

namespace {

std::string data(const std::string& name) { return std::string(ORDEX_TESTS_DIR) + "/data/" + name; }

void expect_error(const ordex_test::RunResult& r, int code, const std::string& needle) {
  EXPECT_EQ(r.exit_code, code) << r.err;
  EXPECT_EQ(r.err.find("Options::"), std::string::npos) << r.err;  // flags, not library field names
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
  auto j = nlohmann::ordered_json::parse(r.out);  // with --json -, standard output is only the JSON
  for (const char* key : {"app", "t0", "t1", "states", "method", "steps", "matrix_evaluations", "phi",
                          "error_estimate", "liouville"})
    EXPECT_TRUE(j.contains(key)) << key;
  // The common header first (CONTRACT.md), with the parameters in effect after --set.
  std::vector<std::string> keys;
  for (auto it = j.begin(); it != j.end() && keys.size() < 6; ++it) keys.push_back(it.key());
  EXPECT_EQ(keys, (std::vector<std::string>{"app", "ordex_version", "model", "t0", "t1", "method"}));
  EXPECT_EQ(j["app"], "ordex-propagate");
  EXPECT_EQ(j["model"]["title"], "Mathieu equation");
  EXPECT_EQ(j["model"]["parameters"]["a"].get<double>(), 2.5);
  EXPECT_EQ(j["model"]["parameters"]["q"].get<double>(), 0.8);
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
  expect_error(run_app("ordex-propagate", "--model " + model_path("mathieu.toml") + " --rtol 0"), 2, "--rtol: 0 is outside");
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

// Forty states in twenty uncoupled rotations x' = y, y' = -x over [0, 20].
static std::string write_chain40() {
  const std::string model = ordex_test::temp_dir() + "/chain40.toml";
  std::string a = "A = [";
  for (int i = 0; i < 40; ++i) {
    a += i ? ",\n     [" : "[";
    for (int j = 0; j < 40; ++j) a += (j ? ", " : "") + std::string(j == (i ^ 1) ? (i % 2 ? "-1" : "1") : "0");
    a += "]";
  }
  std::string states;
  for (int i = 0; i < 40; ++i) states += (i ? ", \"s" : "\"s") + std::to_string(i + 1) + "\"";
  ordex_test::write_file(model, "[system]\nstates = [" + states + "]\n[window]\nfrom = 0\nto = 20\n[matrices]\n" + a + "]\n");
  return model;
}

TEST(CliPropagate, CsvRowsAreStreamedNotHeld) {
  // 40 states and 20000 samples: holding the grid would take 20000 * 1600 * 8 bytes = 256 MB;
  // under a 200 MB address-space limit only a run that writes each row as it is computed
  // finishes. /dev/null is written directly (a device), so no disk space is needed.
#ifdef __SANITIZE_ADDRESS__
  GTEST_SKIP() << "AddressSanitizer reserves terabytes of address space; ulimit -v cannot apply";
#endif
  const std::string model = write_chain40();
  auto r = ordex_test::run("ulimit -v 200000; " + std::string(ORDEX_BIN_DIR) + "/ordex-propagate --model " + model +
                           " --samples 20000 --csv /dev/null --json -");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  auto j = nlohmann::json::parse(r.out);
  // Twenty rotations x' = y, y' = -x: Phi(20, 0) = [[cos 20, sin 20], [-sin 20, cos 20]] per block.
  EXPECT_NEAR(j["phi"][0][0].get<double>(), std::cos(20.0), 1e-6);
  EXPECT_NEAR(j["phi"][38][39].get<double>(), std::sin(20.0), 1e-6);
}

TEST(CliPropagate, FortyStatesPrintABriefReport) {
  const std::string model = write_chain40();
  auto r = run_app("ordex-propagate", "--model " + model);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_LT(ordex_test::line_count(r.out), 16) << r.out;
  EXPECT_NE(r.out.find("JSON"), std::string::npos) << r.out;
}

TEST(FrontEnd, FieldNamesBecomeFlags) {
  EXPECT_EQ(ordex::with_flag_names("PropagationOptions::rtol = 1 is outside [1e-14, 0.1]"),
            "--rtol: 1 is outside [1e-14, 0.1]");
  EXPECT_EQ(ordex::with_flag_names("GramianOptions::kind: unknown kind 'x'", {{"GramianOptions::kind", "--kind"}}),
            "--kind: unknown kind 'x'");
  // The longer field wins over its prefix.
  EXPECT_EQ(ordex::with_flag_names("S::scale.units: empty", {{"S::scale", "--scale"}, {"S::scale.units", "--units"}}),
            "--units: empty");
  EXPECT_EQ(ordex::with_flag_names("model.toml: A[1][1] is nan"), "model.toml: A[1][1] is nan");
}

TEST(FrontEnd, ProgressShowsRealFractions) {
  // Off a terminal: a line every EVERY seconds, none before the first EVERY.
  std::ostringstream lines;
  auto p = ordex::progress_reporter("ordex-x", lines, /*terminal=*/false, /*every=*/0.05);
  p(0.1);  // too early
  ::usleep(60000);
  p(0.3);
  p(0.35);  // too soon after the last line
  ::usleep(60000);
  p(0.62);
  EXPECT_EQ(lines.str().find("10%"), std::string::npos) << lines.str();
  EXPECT_NE(lines.str().find("ordex-x: 30% after"), std::string::npos) << lines.str();
  EXPECT_EQ(lines.str().find("35%"), std::string::npos) << lines.str();
  EXPECT_NE(lines.str().find("ordex-x: 62% after"), std::string::npos) << lines.str();
  const std::string text = lines.str();
  EXPECT_EQ(std::count(text.begin(), text.end(), '\n'), 2) << text;
  // The one-line error checks of the app tests leave these lines out (a slow build prints them).
  EXPECT_EQ(ordex_test::line_count(text + "ordex-x: bad.toml:3: no [matrices] table\n"), 1) << text;
  // On a terminal: a bar redrawn in place, ending with a newline at 100%.
  std::ostringstream bar;
  auto b = ordex::progress_reporter("ordex-x", bar, /*terminal=*/true, /*every=*/0.05);
  ::usleep(20000);
  b(0.5);
  ::usleep(20000);
  b(1.0);
  EXPECT_NE(bar.str().find("\rordex-x ["), std::string::npos) << bar.str();
  EXPECT_NE(bar.str().find(" 50%"), std::string::npos) << bar.str();
  EXPECT_NE(bar.str().find("100%"), std::string::npos) << bar.str();
  EXPECT_EQ(bar.str().back(), '\n');
}
