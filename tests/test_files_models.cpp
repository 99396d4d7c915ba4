// Model, weights and input files that do not fit (issue: names, windows, empty weights):
// reserved or repeated names refused naming the file and key; 1/t models checked on the
// window in force; a tabulated model's default window marked as the tables' span; the files a
// model was read from listed; input histories that barely touch the window flagged; an empty
// weights file said to mean the defaults.
#include <gtest/gtest.h>

#include "io/csv.hpp"
#include "io/errors.hpp"
#include "model/model_file.hpp"
#include "response/input_history.hpp"
#include "riccati/weights.hpp"
#include "support.hpp"

namespace {

using ordex::InputError;

std::string write(const std::string& name, const std::string& text) {
  const std::string p = ordex_test::temp_dir() + "/" + name;
  ordex_test::write_file(p, text);
  return p;
}

std::string load_error(const std::string& path) {
  try {
    ordex::load_model(path);
  } catch (const InputError& e) {
    return e.what();
  }
  return "";
}

std::string model_with_names(const std::string& states, const std::string& inputs = "",
                             const std::string& outputs = "") {
  std::string m = "[system]\nstates = [" + states + "]\n";
  if (!inputs.empty()) m += "inputs = [" + inputs + "]\n";
  if (!outputs.empty()) m += "outputs = [" + outputs + "]\n";
  m += "[matrices]\nA = [[-1, 0], [0, -2]]\n";
  if (!inputs.empty()) m += "B = [[1], [0]]\n";
  if (!outputs.empty()) m += "C = [[1, 0]]\n";
  return m;
}

TEST(ModelNames, TimeFunctionsAndConstantsAreRefused) {
  struct Case {
    std::string states, inputs, outputs, key, words;
  };
  const Case cases[] = {
      {"\"t\", \"v\"", "", "", "system.states[1]", "'t' is the independent variable"},
      {"\"x\", \"sin\"", "", "", "system.states[2]", "'sin' is a function name"},
      {"\"x\", \"v\"", "\"cos\"", "", "system.inputs[1]", "'cos' is a function name"},
      {"\"x\", \"v\"", "", "\"true_anomaly\"", "system.outputs[1]", "'true_anomaly' is a function name"},
      {"\"x\", \"v\"", "", "\"pi\"", "system.outputs[1]", "'pi' is a built-in constant"},
      {"\"x\", \"v\"", "\"t\"", "", "system.inputs[1]", "'t' is the independent variable"},
      // Repeated across the lists: the CSV header t,x,v,x could not be read back.
      {"\"x\", \"v\"", "", "\"x\"", "system.outputs[1]", "'x' is already a state name"},
      {"\"x\", \"v\"", "\"v\"", "", "system.inputs[1]", "'v' is already a state name"},
      {"\"x\", \"x\"", "", "", "system.states[2]", "'x' is already a state name"},
  };
  int k = 0;
  for (const Case& c : cases) {
    const std::string path = write("names" + std::to_string(k++) + ".toml", model_with_names(c.states, c.inputs, c.outputs));
    const std::string m = load_error(path);
    EXPECT_NE(m.find(path + ": " + c.key + ": " + c.words), std::string::npos) << m;
  }
  // Ordinary names that merely contain a function's letters are fine.
  EXPECT_EQ(load_error(write("names_ok.toml", model_with_names("\"sine_x\", \"t_rel\"", "\"expo\"", "\"pix\""))), "");
}

TEST(ModelFiles, HugeExpressionsAndNamesAreQuotedShort) {
  // A 200 kB expression with an unknown symbol, and a 200 kB unknown symbol (whose spelling
  // hint must not build a 200k x 200k table).
  const std::string expr = "1" + std::string(100000, '+') + std::string(100000, '1') + "+omeg";
  std::string m = load_error(write("huge_expr.toml", "[system]\nstates = [\"x\"]\n[parameters]\nomega = 1\n"
                                                     "[matrices]\nA = [[\"" + expr + "\"]]\n"));
  EXPECT_LT(m.size(), 400u) << m.substr(0, 500);
  EXPECT_NE(m.find("matrices.A[1][1]"), std::string::npos) << m.substr(0, 500);
  const std::string name(200000, 'q');
  m = load_error(write("huge_name.toml", "[system]\nstates = [\"x\"]\n[matrices]\nA = [[\"" + name + "\"]]\n"));
  EXPECT_LT(m.size(), 400u) << m.substr(0, 500);
  EXPECT_NE(m.find("unknown symbol"), std::string::npos) << m.substr(0, 500);
}

TEST(ModelFiles, FuzzFindingsEndInAnInputError) {
  // Inputs the model and weights fuzz targets found to stop a TOML parser built with its
  // assertions (a table header opening on a comment character; a non-ASCII letter inside a
  // number): each must end in one clear InputError naming the file and line.
  const std::string header = write("fuzz_header.toml", "[#x]\n[system]\nstates = [\"x\"]\n");
  std::string m = load_error(header);
  EXPECT_NE(m.find(header + ":1:"), std::string::npos) << m;
  const std::string number = write("fuzz_number.toml", "# q\nR = [0.\xC9\xA2\n");
  try {
    ordex::load_weights(number, 1, 1);
    FAIL() << "accepted";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find(number + ":2:"), std::string::npos) << e.what();
  }
}

TEST(ModelWindow, SingularAtZeroIsCheckedOnTheWindowInForce) {
  // x' = -x / t (and log t): infinite at t = 0, fine on [1, 10].
  const std::string path = write("inverse_t.toml",
      "[system]\nstates = [\"x\"]\n[matrices]\nA = [[\"-1/t + 0*log(t)\"]]\n");
  auto sys = ordex::load_model(path);
  EXPECT_NO_THROW(sys->require_defined_on(1.0, 10.0, "--from/--to"));
  try {
    sys->require_defined_on(0.0, 10.0, "--from/--to");
    FAIL() << "a window starting at t = 0 was accepted";
  } catch (const InputError& e) {
    const std::string m = e.what();
    EXPECT_NE(m.find(path + ": matrices.A[1][1]"), std::string::npos) << m;
    EXPECT_NE(m.find("at t = 0"), std::string::npos) << m;
  }
  // With a [window] starting at 0 it is still refused at load, naming the key.
  const std::string bad = write("inverse_t_window.toml",
      "[system]\nstates = [\"x\"]\n[window]\nfrom = 0\nto = 1\n[matrices]\nA = [[\"-1/t\"]]\n");
  EXPECT_NE(load_error(bad).find("matrices.A[1][1]"), std::string::npos);
}

TEST(ModelWindow, TablesSpanIsMarkedAsNotDeclaredAndFilesAreListed) {
  const std::string csv = write("span.csv", "t,k\n0,1\n100,2\n");
  const std::string table_model = write("span.toml",
      "[system]\nstates = [\"x\"]\n[table]\nfile = \"span.csv\"\n[matrices]\nA = [[\"-k\"]]\n");
  auto sys = ordex::load_model(table_model);
  ASSERT_TRUE(sys->info().window.has_value());
  EXPECT_TRUE(sys->info().window_from_tables);
  EXPECT_EQ(sys->info().window->second, 100.0);
  EXPECT_EQ(sys->info().files_read, (std::vector<std::string>{table_model, csv}));
  const std::string declared = write("span_declared.toml",
      "[system]\nstates = [\"x\"]\n[window]\nfrom = 0\nto = 5\n[table]\nfile = \"span.csv\"\n"
      "[matrices]\nA = [[\"-k\"]]\n");
  EXPECT_FALSE(ordex::load_model(declared)->info().window_from_tables);
}

TEST(ModelFiles, TableWithByteOrderMarkBeforeAComment) {
  write("bom_table.csv", "\xEF\xBB\xBF# gains from the bench log\nt,k\n0,1\n1,3\n");
  const std::string model = write("bom_table.toml",
      "[system]\nstates = [\"x\"]\n[table]\nfile = \"bom_table.csv\"\n[matrices]\nA = [[\"-k\"]]\n");
  auto sys = ordex::load_model(model);
  EXPECT_DOUBLE_EQ(sys->A(0.5)(0, 0), -2.0);  // linear between (0, 1) and (1, 3)
  // A model file with a mark loads as well.
  const std::string marked = write("bom_model.toml", "\xEF\xBB\xBF" + model_with_names("\"x\", \"v\""));
  EXPECT_EQ(load_error(marked), "");
  // /dev/zero and a folder as the model.
  EXPECT_NE(load_error("/dev/zero").find("/dev/zero: not a regular file"), std::string::npos);
  EXPECT_NE(load_error(ordex_test::temp_dir()).find("is a folder, not a model file"), std::string::npos);
}

TEST(InputWindowFit, MillisecondsAgainstSecondsAreFlagged) {
  // 0 .. 5000 ms every 10 ms, against a 10 s window: two samples inside.
  std::vector<double> times;
  for (int k = 0; k <= 500; ++k) times.push_back(10.0 * k);
  Eigen::MatrixXd u = Eigen::MatrixXd::Ones(static_cast<Eigen::Index>(times.size()), 1);
  ordex::InputHistory ms = ordex::make_input_history(times, u, "log_ms.csv");
  const std::string w = ordex::window_fit_warning(ms, 0.0, 10.0);
  EXPECT_NE(w.find("log_ms.csv: only 2 of its 501 samples fall inside the window [0, 10]"), std::string::npos) << w;
  // The same log in seconds fits.
  for (double& t : times) t /= 1000.0;
  ordex::InputHistory s = ordex::make_input_history(times, u, "log_s.csv");
  EXPECT_EQ(ordex::window_fit_warning(s, 0.0, 5.0), "");
  // A history of two samples spanning the window is not suspicious.
  ordex::InputHistory two = ordex::make_input_history({0.0, 10.0}, Eigen::MatrixXd::Ones(2, 1), "two.csv");
  EXPECT_EQ(ordex::window_fit_warning(two, 0.0, 10.0), "");
}

TEST(InputHistory, NoInputColumnsIsFine) {
  // A model without inputs: a history with no columns (UBSan reported an offset on its null data).
  ordex::InputHistory h = ordex::make_input_history({0.0, 1.0, 2.0}, Eigen::MatrixXd(3, 0), "free");
  EXPECT_EQ(h.inputs(), 0);
  EXPECT_THROW(ordex::make_input_history({0.0, 0.0}, Eigen::MatrixXd(2, 0)), InputError);
}

TEST(Weights, EmptyFileSaysTheDefaultsAreUsed) {
  const std::string empty = write("empty_weights.toml", "");
  ordex::Weights w = ordex::load_weights(empty, 2, 1);
  EXPECT_EQ(w.defaults_used, (std::vector<std::string>{"Q", "R", "Qf"}));
  EXPECT_EQ(w.note, empty + " sets none of Q, R, Qf, N: the defaults Q = I, R = I, Qf = 0 are used");
  EXPECT_EQ(w.R.at(0.0)(0, 0), 1.0);
  const std::string partial = write("partial_weights.toml", "Q = [2, 3]\n");
  w = ordex::load_weights(partial, 2, 1);
  EXPECT_EQ(w.defaults_used, (std::vector<std::string>{"R", "Qf"}));
  EXPECT_EQ(w.note, partial + ": defaults R = I, Qf = 0 used");
  const std::string full = write("full_weights.toml", "Q = [2, 3]\nR = [1]\nQf = [0, 0]\n");
  EXPECT_EQ(ordex::load_weights(full, 2, 1).note, "");
  // /dev/zero as weights.
  EXPECT_THROW(ordex::load_weights("/dev/zero", 2, 1), InputError);
}

}  // namespace
