// ordex-respond and ordex-discretize as a user runs them (CONTRACT.md), against scipy
// (signal.lsim, integrate.solve_ivp, signal.cont2discrete, linalg.expm) and against each other.
#include <gtest/gtest.h>

#include <cmath>
#include <Eigen/Dense>
#include <nlohmann/json.hpp>
#include <sstream>

#include "support.hpp"

using ordex_test::file_exists;
using ordex_test::read_file;
using ordex_test::run_app;
using ordex_test::run_python;
using ordex_test::temp_dir;
using ordex_test::write_file;
using nlohmann::json;

namespace {

const std::string kData = std::string(ORDEX_TESTS_DIR) + "/data/";
const std::string kConstant = kData + "response_constant.toml";
const std::string kPumped = kData + "response_pumped.toml";

// Numbers of a CSV text (header skipped when HEADER), one row a line.
Eigen::MatrixXd parse_csv(const std::string& text, bool header) {
  std::vector<std::vector<double>> rows;
  std::istringstream in(text);
  std::string line;
  bool first = header;
  while (std::getline(in, line)) {
    if (line.empty()) continue;
    if (first) { first = false; continue; }
    std::vector<double> r;
    std::istringstream ls(line);
    std::string f;
    while (std::getline(ls, f, ',')) r.push_back(std::stod(f));
    rows.push_back(r);
  }
  Eigen::MatrixXd m(rows.size(), rows.empty() ? 0 : rows[0].size());
  for (std::size_t i = 0; i < rows.size(); ++i)
    for (std::size_t j = 0; j < rows[i].size(); ++j) m(i, j) = rows[i][j];
  return m;
}

std::string header_of(const std::string& path) {
  std::string t = read_file(path);
  return t.substr(0, t.find('\n'));
}

Eigen::MatrixXd matrix_of(const json& j) {
  Eigen::MatrixXd m(j.size(), j.empty() ? 0 : j[0].size());
  for (std::size_t i = 0; i < j.size(); ++i)
    for (std::size_t k = 0; k < j[i].size(); ++k) m(i, k) = j[i][k].get<double>();
  return m;
}

// An input CSV on N samples of [0, T] (uniform unless JITTER), two columns named NAMES.
std::string make_input(const std::string& name, int N, double T, const std::string& names,
                       double jitter = 0.0, double phase = 0.0) {
  std::ostringstream o;
  o.precision(17);
  o << "t," << names << "\n";
  for (int k = 0; k < N; ++k) {
    double t = T * k / (N - 1);
    if (k > 0 && k < N - 1) t += jitter * T / (N - 1) * std::sin(5.1 * k);
    o << t << "," << std::sin(1.1 * t + phase) + (t > 3 ? 0.25 : 0.0) << "," << 0.4 * std::cos(1.7 * t) << "\n";
  }
  std::string path = temp_dir() + "/" + name;
  write_file(path, o.str());
  return path;
}

double max_abs(const Eigen::MatrixXd& m) { return m.cwiseAbs().maxCoeff(); }

// An error run: exit 2, one line "APP: error: ..." containing WHAT, no output file left.
void expect_input_error(const std::string& app, const std::string& args, const std::string& what,
                        const std::string& output = "") {
  auto r = run_app(app, args);
  EXPECT_EQ(r.exit_code, 2) << args << "\n" << r.err;
  EXPECT_EQ(ordex_test::line_count(r.err), 1) << r.err;
  EXPECT_EQ(r.err.rfind(app + ": error:", 0), 0u) << r.err;
  EXPECT_NE(r.err.find(what), std::string::npos) << "expected '" << what << "' in: " << r.err;
  if (!output.empty()) EXPECT_FALSE(file_exists(output)) << output;
}

}  // namespace

TEST(RespondApp, ConstantModelMatchesLsimBothHolds) {
  const std::string in = make_input("app_const.csv", 301, 15.0, "push,bias");
  for (std::string hold : {"linear", "zoh"}) {
    const std::string csv = temp_dir() + "/app_const_" + hold + ".csv";
    auto r = run_app("ordex-respond", "--model " + kConstant + " --input " + in + " --hold " + hold +
                                          " --x0 0.5,0,-0.25 --csv " + csv);
    ASSERT_EQ(r.exit_code, 0) << r.err;
    EXPECT_EQ(header_of(csv), "t,pos,vel,lag,pos_meas,mix");
    Eigen::MatrixXd got = parse_csv(read_file(csv), true);
    // Outside reference: scipy.signal.lsim (interp=True: linear; interp=False: zero-order hold).
    auto ref = run_python("response_lsim.py", kConstant + " " + in + " " + hold + " 0.5,0,-0.25");
    ASSERT_EQ(ref.exit_code, 0) << ref.err;
    Eigen::MatrixXd want = parse_csv(ref.out, false);
    ASSERT_EQ(got.rows(), 301);
    ASSERT_EQ(got.cols(), want.cols());
    EXPECT_LT(max_abs(got - want), 1e-8 * max_abs(want)) << hold;
  }
}

TEST(RespondApp, TimeVaryingModelMatchesSolveIvpAndDirectPath) {
  const std::string in = make_input("app_pumped.csv", 151, 12.0, "u1,u2", 0.3);
  for (std::string hold : {"linear", "zoh"}) {
    auto ref = run_python("response_solve_ivp.py", in + " " + hold + " 0.3,-1");
    ASSERT_EQ(ref.exit_code, 0) << ref.err;
    Eigen::MatrixXd want = parse_csv(ref.out, false);
    for (std::string path : {"exact", "direct"}) {
      const std::string csv = temp_dir() + "/app_pumped_" + hold + path + ".csv";
      auto r = run_app("ordex-respond", "--model " + kPumped + " --input " + in + " --hold " + hold +
                                            " --path " + path + " --rtol 1e-11 --atol 1e-13 --x0 0.3,-1 --csv " + csv);
      ASSERT_EQ(r.exit_code, 0) << r.err;
      Eigen::MatrixXd got = parse_csv(read_file(csv), true);
      ASSERT_EQ(got.rows(), want.rows());
      // Outside reference: scipy.integrate.solve_ivp with the same interpolated input.
      EXPECT_LT(max_abs(got - want), 1e-8) << hold << " " << path;
    }
  }
}

TEST(RespondApp, RepeatedInputsGiveTheirOwnResults) {
  const std::string a = make_input("batch_a.csv", 101, 8.0, "u1,u2", 0.2, 0.0);
  const std::string b = make_input("batch_b.csv", 101, 8.0, "u1,u2", 0.2, 0.9);
  const std::string c = make_input("batch_c.csv", 61, 8.0, "u1,u2", 0.0, 2.0);
  const std::string dir = temp_dir() + "/batch_out";
  const std::string jpath = temp_dir() + "/batch.json";
  auto r = run_app("ordex-respond", "--model " + kPumped + " --input " + a + " --input " + b + " --input " + c +
                                        " --x0 1,0 --csv " + dir + " --json " + jpath);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  json j = json::parse(read_file(jpath));
  ASSERT_EQ(j["runs"].size(), 3u);
  EXPECT_EQ(j["grids"].get<int>(), 2);  // a and b share their grid
  const std::string names[] = {"batch_a", "batch_b", "batch_c"};
  const std::string ins[] = {a, b, c};
  for (int i = 0; i < 3; ++i) {
    EXPECT_EQ(j["runs"][i]["input"].get<std::string>(), ins[i]);
    const std::string one_csv = temp_dir() + "/single_" + names[i] + ".csv";
    const std::string one_json = temp_dir() + "/single_" + names[i] + ".json";
    auto s = run_app("ordex-respond", "--model " + kPumped + " --input " + ins[i] + " --x0 1,0 --csv " + one_csv +
                                          " --json " + one_json);
    ASSERT_EQ(s.exit_code, 0) << s.err;
    Eigen::MatrixXd batch = parse_csv(read_file(dir + "/" + names[i] + ".csv"), true);
    Eigen::MatrixXd single = parse_csv(read_file(one_csv), true);
    ASSERT_EQ(batch.rows(), single.rows());
    EXPECT_LT(max_abs(batch - single), 1e-12) << names[i];
    json js = json::parse(read_file(one_json));
    for (const char* key : {"t0", "t1", "samples", "x_final", "y_final"}) EXPECT_TRUE(js.contains(key)) << key;
    EXPECT_EQ(js["samples"].get<int>(), i == 2 ? 61 : 101);
    for (int k = 0; k < 2; ++k)
      EXPECT_NEAR(j["runs"][i]["x_final"][k].get<double>(), js["x_final"][k].get<double>(), 1e-12);
  }
}

TEST(RespondApp, WindowAndSamplesOptions) {
  const std::string in = make_input("window.csv", 81, 8.0, "u1,u2");
  const std::string csv = temp_dir() + "/window_out.csv";
  auto r = run_app("ordex-respond", "--model " + kPumped + " --input " + in + " --from 2 --to 6.5 --samples 10 --csv " + csv);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  Eigen::MatrixXd got = parse_csv(read_file(csv), true);
  ASSERT_EQ(got.rows(), 10);
  EXPECT_DOUBLE_EQ(got(0, 0), 2.0);
  EXPECT_DOUBLE_EQ(got(9, 0), 6.5);
  EXPECT_DOUBLE_EQ(got(0, 1), 0.0);  // x0 = 0 at the window's start
  // A window outside the samples names the file and the line of the last sample.
  expect_input_error("ordex-respond", "--model " + kPumped + " --input " + in + " --to 9 --csv " + csv + "x",
                     in + ":82: the window ends at t = 9", csv + "x");
}

TEST(RespondApp, FreeResponseOfModelWithoutInputs) {
  const std::string model = kData + "response_free.toml";
  const std::string jpath = temp_dir() + "/free.json";
  auto r = run_app("ordex-respond", "--model " + model + " --x0 1,0.5 --json " + jpath);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  json j = json::parse(read_file(jpath));
  EXPECT_EQ(j["samples"].get<int>(), 101);
  // Outside reference: scipy.linalg.expm(A * 6) x0.
  auto ref = ordex_test::run(std::string(ORDEX_PYTHON) +
                             " -c \"import numpy as np, scipy.linalg as L; "
                             "x=L.expm(np.array([[0,1],[-3,-0.5]])*6.0)@np.array([1,0.5]); print(repr(x[0]), repr(x[1]))\"");
  ASSERT_EQ(ref.exit_code, 0) << ref.err;
  std::istringstream ss(ref.out);
  double x0, x1;
  ss >> x0 >> x1;
  EXPECT_NEAR(j["x_final"][0].get<double>(), x0, 1e-8);
  EXPECT_NEAR(j["x_final"][1].get<double>(), x1, 1e-8);
  EXPECT_NEAR(j["y_final"][0].get<double>(), x0, 1e-8);
  expect_input_error("ordex-respond", "--model " + model + " --input " + make_input("free_in.csv", 3, 1.0, "a,b"),
                     "has no inputs");
}

TEST(DiscretizeApp, ConstantModelMatchesScipy) {
  for (std::string hold : {"zoh", "linear"}) {
    const std::string jpath = temp_dir() + "/c2d_" + hold + ".json";
    auto r = run_app("ordex-discretize", "--model " + kConstant + " --from 0 --to 2 --step 0.25 --hold " + hold +
                                             " --rtol 1e-12 --atol 1e-14 --json " + jpath);
    ASSERT_EQ(r.exit_code, 0) << r.err;
    EXPECT_NE(r.out.find("Caution"), std::string::npos);
    json j = json::parse(read_file(jpath));
    ASSERT_EQ(j["times"].size(), 9u);
    ASSERT_EQ(j["phi"].size(), 8u);
    // Outside reference: scipy.signal.cont2discrete (zoh), or the block exponential of lsim.
    auto ref = run_python("response_c2d.py", kConstant + " 0.25 " + hold);
    ASSERT_EQ(ref.exit_code, 0) << ref.err;
    json want = json::parse(ref.out);
    for (std::size_t k = 0; k < 8; ++k) {
      EXPECT_LT(max_abs(matrix_of(j["phi"][k]) - matrix_of(want["phi"])), 1e-11) << k;
      for (std::string g : hold == "zoh" ? std::vector<std::string>{"gamma"} : std::vector<std::string>{"gamma0", "gamma1"})
        EXPECT_LT(max_abs(matrix_of(j[g][k]) - matrix_of(want[g])), 1e-11) << g << " " << k;
    }
    if (hold == "zoh") EXPECT_FALSE(j.contains("gamma0"));
    if (hold == "linear") EXPECT_FALSE(j.contains("gamma"));
  }
}

TEST(DiscretizeApp, DiscreteModelReproducesRespondOnTheSameGrid) {
  const std::string in = make_input("repro.csv", 121, 10.0, "u1,u2", 0.3);
  Eigen::MatrixXd U = parse_csv(read_file(in), true);
  const std::string times = temp_dir() + "/repro_times.txt";
  {
    std::ostringstream o;
    o.precision(17);
    for (Eigen::Index k = 0; k < U.rows(); ++k) o << U(k, 0) << "\n";
    write_file(times, o.str());
  }
  for (std::string hold : {"linear", "zoh"}) {
    const std::string jpath = temp_dir() + "/repro_" + hold + ".json";
    const std::string cpath = temp_dir() + "/repro_" + hold + ".csv";
    const std::string rcsv = temp_dir() + "/repro_resp_" + hold + ".csv";
    auto d = run_app("ordex-discretize", "--model " + kPumped + " --times " + times + " --hold " + hold +
                                             " --json " + jpath + " --csv " + cpath);
    ASSERT_EQ(d.exit_code, 0) << d.err;
    auto r = run_app("ordex-respond", "--model " + kPumped + " --input " + in + " --hold " + hold +
                                          " --x0 0.4,0.1 --csv " + rcsv);
    ASSERT_EQ(r.exit_code, 0) << r.err;
    json j = json::parse(read_file(jpath));
    Eigen::MatrixXd resp = parse_csv(read_file(rcsv), true);
    Eigen::Vector2d x(0.4, 0.1);
    double worst = 0;
    for (std::size_t k = 0; k + 1 < j["times"].size(); ++k) {
      Eigen::VectorXd next = matrix_of(j["phi"][k]) * x;
      Eigen::VectorXd uk = U.row(k).segment(1, 2).transpose(), uk1 = U.row(k + 1).segment(1, 2).transpose();
      if (hold == "zoh") next += matrix_of(j["gamma"][k]) * uk;
      else next += matrix_of(j["gamma0"][k]) * uk + matrix_of(j["gamma1"][k]) * uk1;
      x = next;
      worst = std::max(worst, (x - resp.row(k + 1).segment(1, 2).transpose()).cwiseAbs().maxCoeff());
    }
    // Same step matrices, written with full precision: equal to rounding.
    EXPECT_LT(worst, 1e-13) << hold;
    // CSV layout (docs/response.md): k,t_start,t_end,phi_1_1..,gamma.. ; same numbers as JSON.
    std::string h = header_of(cpath);
    if (hold == "zoh")
      EXPECT_EQ(h, "k,t_start,t_end,phi_1_1,phi_1_2,phi_2_1,phi_2_2,gamma_1_1,gamma_1_2,gamma_2_1,gamma_2_2");
    else
      EXPECT_EQ(h, "k,t_start,t_end,phi_1_1,phi_1_2,phi_2_1,phi_2_2,gamma0_1_1,gamma0_1_2,gamma0_2_1,gamma0_2_2,"
                   "gamma1_1_1,gamma1_1_2,gamma1_2_1,gamma1_2_2");
    Eigen::MatrixXd rows = parse_csv(read_file(cpath), true);
    ASSERT_EQ(rows.rows(), 120);
    EXPECT_EQ(rows(7, 0), 7.0);
    EXPECT_EQ(rows(7, 1), U(7, 0));
    EXPECT_EQ(rows(7, 2), U(8, 0));
    EXPECT_EQ(rows(7, 4), j["phi"][7][0][1].get<double>());
    EXPECT_EQ(rows(7, 8), (hold == "zoh" ? j["gamma"] : j["gamma0"])[7][0][1].get<double>());
  }
}

TEST(RespondApp, BadInputExitsTwoNamingFileAndLine) {
  const std::string dir = temp_dir();
  const std::string out = dir + "/never.csv", jout = dir + "/never.json";
  struct Case { std::string name, text, expect; };
  const Case cases[] = {
      {"e_order.csv", "t,u1,u2\n0,1,2\n1,1,2\n0.5,1,2\n", "e_order.csv:4: t is not strictly increasing"},
      {"e_missing.csv", "t,u1\n0,1\n1,2\n", "e_missing.csv:1: header 't,u1' does not match the model's inputs (expected 't,u1,u2')"},
      {"e_names.csv", "t,u1,force\n0,1,2\n1,1,2\n", "e_names.csv:1: header 't,u1,force'"},
      {"e_extra.csv", "t,u1,u2\n0,1,2\n1,1,2,3\n", "e_extra.csv:3: 4 fields, the header has 3"},
      {"e_short.csv", "t,u1,u2\n0,1,2\n1,1\n", "e_short.csv:3: 2 fields"},
      {"e_text.csv", "t,u1,u2\n0,1,2\n1,1,two\n", "e_text.csv:3: column 'u2': 'two' is not a finite number"},
      {"e_inf.csv", "t,u1,u2\n0,inf,2\n1,1,2\n", "e_inf.csv:2: column 'u1'"},
      {"e_one.csv", "t,u1,u2\n0,1,2\n", "e_one.csv: 1 data rows, at least 2"},
      {"e_notime.csv", "time,u1,u2\n0,1,2\n1,1,2\n", "e_notime.csv:1: header 'time,u1,u2'"},
  };
  for (const Case& c : cases) {
    write_file(dir + "/" + c.name, c.text);
    expect_input_error("ordex-respond", "--model " + kPumped + " --input " + dir + "/" + c.name + " --csv " + out +
                                            " --json " + jout, c.expect, out);
    EXPECT_FALSE(file_exists(jout));
  }
  const std::string good = make_input("e_good.csv", 11, 1.0, "u1,u2");
  expect_input_error("ordex-respond", "--model " + kPumped, "--input PATH is required", "");
  expect_input_error("ordex-respond", "--model " + kPumped + " --input " + good + " --hold cubic", "--hold: unknown hold 'cubic'");
  expect_input_error("ordex-respond", "--model " + kPumped + " --input " + good + " --path fast", "--path: unknown path 'fast'");
  expect_input_error("ordex-respond", "--model " + kPumped + " --input " + good + " --x0 1,2,3 --csv " + out,
                     "--x0: 3 entries, the model has 2 states", out);
  expect_input_error("ordex-respond", "--model " + kPumped + " --input " + good + " --from -1", good + ":2: the window starts at t = -1");
  expect_input_error("ordex-respond", "--model " + kPumped + " --input " + good + " --path direct --method magnus4",
                     "--method: magnus4");
  expect_input_error("ordex-respond", "--model " + kPumped + " --input " + good + " --input " + good + " --csv " + dir + "/dup",
                     "--csv: two inputs would both write e_good.csv");
  expect_input_error("ordex-respond", "--model " + kPumped + " --input " + good + " --bogus 1", "bogus");
}

TEST(DiscretizeApp, BadInputExitsTwo) {
  const std::string dir = temp_dir();
  const std::string out = dir + "/never_d.json";
  write_file(dir + "/t_order.txt", "0\n0.5\n0.5\n");
  write_file(dir + "/t_text.txt", "t\n0\nhalf\n");
  write_file(dir + "/t_one.txt", "# only one\n0\n");
  expect_input_error("ordex-discretize", "--model " + kPumped + " --times " + dir + "/t_order.txt --json " + out,
                     "t_order.txt:3: t is not strictly increasing", out);
  expect_input_error("ordex-discretize", "--model " + kPumped + " --times " + dir + "/t_text.txt --json " + out,
                     "t_text.txt:3: 'half' is not a finite number", out);
  expect_input_error("ordex-discretize", "--model " + kPumped + " --times " + dir + "/t_one.txt --json " + out,
                     "t_one.txt: 1 times, at least 2", out);
  expect_input_error("ordex-discretize", "--model " + kPumped + " --from 0 --to 1 --step -0.1 --json " + out,
                     "--step: -0.1", out);
  expect_input_error("ordex-discretize", "--model " + kPumped + " --from 0 --to 1 --step 0.1 --times " + dir + "/t_one.txt",
                     "--step and --times");
  expect_input_error("ordex-discretize", "--model " + kPumped + " --step 0.1", "no window");
  expect_input_error("ordex-discretize", "--model " + kPumped + " --from 0 --to 1 --hold cubic", "--hold: unknown hold");
}

TEST(ResponseApps, HelpExplainsEveryOption) {
  auto r = run_app("ordex-respond", "--help");
  ASSERT_EQ(r.exit_code, 0);
  for (const char* opt : {"--input", "--hold", "--x0", "--path", "--no-reuse", "--samples", "--csv", "--json", "--method"})
    EXPECT_NE(r.out.find(opt), std::string::npos) << opt;
  auto d = run_app("ordex-discretize", "--help");
  ASSERT_EQ(d.exit_code, 0);
  for (const char* opt : {"--step", "--times", "--hold", "--no-reuse", "--csv", "--json"})
    EXPECT_NE(d.out.find(opt), std::string::npos) << opt;
}

TEST(RespondApp, OverflowIsANumericalFailure) {
  const std::string in = temp_dir() + "/blowup_in.csv";
  write_file(in, "t,u\n0,1\n5,1\n10,1\n");
  const std::string csv = temp_dir() + "/blowup_out.csv";
  for (std::string path : {"exact", "direct"}) {
    auto r = run_app("ordex-respond", "--model " + kData + "response_blowup.toml --input " + in + " --path " + path +
                                          " --x0 1 --csv " + csv);
    EXPECT_EQ(r.exit_code, 3) << path << ": " << r.err;
    EXPECT_EQ(ordex_test::line_count(r.err), 1) << r.err;
    EXPECT_EQ(r.err.rfind("ordex-respond: error:", 0), 0u) << r.err;
    EXPECT_NE(r.err.find("t = "), std::string::npos) << r.err;  // says where it failed
    EXPECT_FALSE(file_exists(csv));
  }
}
