// Tabulated models (docs/models.md "Tabulated models"): interpolation against independent
// values, the outside-the-table policy, breakpoints, whole-matrix tables, several tables, and
// every mistake in the CSV or the [table] section.
#include <gtest/gtest.h>

#include <cmath>
#include <sstream>

// Boost 1.74's pchip.hpp calls isnan unqualified; make std::isnan visible to it.
#include <cmath>
namespace boost::math::interpolators { using std::isnan; }
#include <boost/math/interpolators/pchip.hpp>

#include "io/errors.hpp"
#include "model/expression_system.hpp"
#include "model/function_system.hpp"
#include "model/model_file.hpp"
#include "model/model_report.hpp"
#include "model/time_table.hpp"
#include "support.hpp"

namespace {

using ordex::InputError;
using ordex::load_model;
using ordex_test::temp_dir;
using ordex_test::write_file;

std::string write(const std::string& name, const std::string& text) {
  std::string path = temp_dir() + "/" + name;
  write_file(path, text);
  return path;
}

std::string data_path(const std::string& name) { return std::string(ORDEX_TESTS_DIR) + "/data/" + name; }

template <class F>
std::string input_error(F f) {
  try {
    f();
  } catch (const InputError& e) {
    return e.what();
  }
  ADD_FAILURE() << "no InputError";
  return "";
}

// A one-state model reading column COLUMN of CSV (a file name next to the model).
std::string table_model(const std::string& csv, const std::string& interpolation,
                        const std::string& outside = "error", const std::string& entry = "U") {
  return "[system]\nstates = [\"x\"]\n[table]\nfile = \"" + csv + "\"\ninterpolation = \"" +
         interpolation + "\"\noutside = \"" + outside + "\"\n[matrices]\nA = [[\"" + entry + "\"]]\n";
}

TEST(ModelTable, LinearInterpolationByHand) {
  write("lin.csv", "t,U,W\n0,1,0\n1,3,5\n3,-1,5\n");
  auto sys = load_model(write("lin.toml", table_model("lin.csv", "linear", "error", "U + 10*W")));
  // Hand values: U(0.5) = (1+3)/2, W(0.5) = 2.5; U(2) = 3 + (2-1)/(3-1) (-1-3) = 1, W(2) = 5.
  EXPECT_DOUBLE_EQ(sys->A(0.5)(0, 0), 2.0 + 25.0);
  EXPECT_DOUBLE_EQ(sys->A(2.0)(0, 0), 1.0 + 50.0);
  EXPECT_DOUBLE_EQ(sys->A(0.25)(0, 0), 1.5 + 12.5);
  EXPECT_DOUBLE_EQ(sys->A(1.0)(0, 0), 3.0 + 50.0);  // samples are reproduced exactly
  EXPECT_DOUBLE_EQ(sys->A(3.0)(0, 0), -1.0 + 50.0);
  // Every sample time is a breakpoint (the interpolant has kinks there); the window defaults
  // to the table's span.
  EXPECT_EQ(sys->info().breakpoints, (std::vector<double>{0, 1, 3}));
  ASSERT_TRUE(sys->info().window.has_value());
  EXPECT_EQ(sys->info().window->first, 0.0);
  EXPECT_EQ(sys->info().window->second, 3.0);
}

TEST(ModelTable, PchipMatchesScipy) {
  const std::string csv = data_path("model_schedule.csv");
  std::vector<double> times;
  for (int k = 0; k <= 100; ++k) times.push_back(5.0 * k / 100.0);
  for (double t : {1e-9, 0.4, 1.5, 2.7, 4.999999}) times.push_back(t);
  ordex::TableOptions opt;
  opt.file = csv;
  opt.interpolation = ordex::Interpolation::pchip;
  ordex::TimeTable table(opt);
  ASSERT_EQ(table.columns(), (std::vector<std::string>{"g", "h"}));
  for (int column = 0; column < 2; ++column) {
    std::ostringstream args;
    args.precision(17);
    args << csv << " " << table.columns()[column];
    for (double t : times) args << " " << t;
    // Outside check: scipy.interpolate.PchipInterpolator (Fritsch-Butland slopes, one-sided
    // three-point end slopes).
    auto r = ordex_test::run_python("model_pchip.py", args.str());
    ASSERT_EQ(r.exit_code, 0) << r.err;
    std::istringstream in(r.out);
    for (double t : times) {
      double expected;
      ASSERT_TRUE(in >> expected);
      EXPECT_NEAR(table.value(column, t), expected, 1e-13) << "column " << column << " t = " << t;
    }
  }
}

TEST(ModelTable, PchipInteriorMatchesBoostMath) {
  // Boost.Math's pchip has the same interior slopes; its default end slopes are plain secants,
  // so only intervals away from the ends are compared.
  ordex::TableOptions opt;
  opt.file = data_path("model_schedule.csv");
  opt.interpolation = ordex::Interpolation::pchip;
  ordex::TimeTable table(opt);
  std::vector<double> x = table.times();
  std::vector<double> y = {1.0, 1.8, 2.0, 2.0, 0.5, -0.6, -0.2, 3.0};  // column g of the file
  boost::math::interpolators::pchip<std::vector<double>> boost_pchip(std::move(x), std::move(y));
  for (double t = 0.4; t <= 4.2; t += 0.01) EXPECT_NEAR(table.value(0, t), boost_pchip(t), 1e-14) << t;
}

TEST(ModelTable, PchipPreservesShapeAndIsSmooth) {
  ordex::TableOptions opt;
  opt.file = data_path("model_schedule.csv");
  opt.interpolation = ordex::Interpolation::pchip;
  ordex::TimeTable table(opt);
  const auto& ts = table.times();
  // On the flat stretch [1.0, 1.5] (g = 2 at both ends) the curve stays flat: no overshoot.
  for (double t = 1.0; t <= 1.5; t += 0.01) EXPECT_NEAR(table.value(0, t), 2.0, 1e-15);
  // Within each interval of monotone data the curve stays between the samples.
  for (std::size_t k = 0; k + 1 < ts.size(); ++k) {
    double y0 = table.value(0, ts[k]), y1 = table.value(0, ts[k + 1]);
    for (int j = 1; j < 20; ++j) {
      double v = table.value(0, ts[k] + (ts[k + 1] - ts[k]) * j / 20.0);
      EXPECT_GE(v, std::min(y0, y1) - 1e-14);
      EXPECT_LE(v, std::max(y0, y1) + 1e-14);
    }
  }
  // C1: the slope is continuous across the samples.
  for (std::size_t k = 1; k + 1 < ts.size(); ++k) {
    double h = 1e-6, t = ts[k];
    double left = (table.value(0, t) - table.value(0, t - h)) / h;
    double right = (table.value(0, t + h) - table.value(0, t)) / h;
    EXPECT_NEAR(left, right, 1e-4 * (1 + std::fabs(left))) << t;
  }
  EXPECT_EQ(table.breakpoints(), (std::vector<double>{0.0, 5.0}));  // only the ends
}

TEST(ModelTable, OutsideTheTable) {
  write("span.csv", "t,U\n0,1\n1,2\n2,4\n");
  auto strict = load_model(write("strict.toml", table_model("span.csv", "linear")));
  try {
    strict->A(2.5);
    ADD_FAILURE() << "no error outside the table";
  } catch (const ordex::NumericalError& e) {
    std::string msg = e.what();
    EXPECT_NE(msg.find("span.csv: t = 2.5 is outside the table's times [0, 2]"), std::string::npos) << msg;
  }
  EXPECT_THROW(strict->A(-0.1), ordex::NumericalError);
  // Rounding at the ends is absorbed (the engine may land a hair beyond the last sample).
  EXPECT_DOUBLE_EQ(strict->A(2.0 + 1e-14)(0, 0), 4.0);
  auto held = load_model(write("held.toml", table_model("span.csv", "linear", "hold")));
  EXPECT_DOUBLE_EQ(held->A(7.0)(0, 0), 4.0);
  EXPECT_DOUBLE_EQ(held->A(-3.0)(0, 0), 1.0);
  // A [window] reaching outside a strict table is caught at load.
  std::string text = table_model("span.csv", "linear") + "[window]\nfrom = 0\nto = 3\n";
  std::string path = write("wide.toml", text);
  std::string msg = input_error([&] { load_model(path); });
  EXPECT_NE(msg.find(path + ": window: [0, 3] reaches outside the times of"), std::string::npos) << msg;
  std::string ok = write("wide_hold.toml", table_model("span.csv", "linear", "hold") + "[window]\nfrom = 0\nto = 3\n");
  EXPECT_DOUBLE_EQ(load_model(ok)->A(3.0)(0, 0), 4.0);
}

TEST(ModelTable, WholeMatrixFromColumns) {
  write("mat.csv",
        "t,A_1_1,A_1_2,A_2_1,A_2_2,B_1_1,B_2_1\n"
        "0,0,1,-1,0,0,1\n"
        "2,0,1,-3,-0.4,0,2\n");
  auto sys = load_model(write("mat.toml", R"M(
[system]
states = ["x", "v"]
inputs = ["u"]
[table]
file = "mat.csv"
[matrices]
A = { table = "A" }
B = { table = "B" }
)M"));
  Eigen::Matrix2d a;
  a << 0, 1, -2, -0.2;  // halfway between the two rows
  EXPECT_LT((sys->A(1.0) - a).norm(), 1e-15);
  EXPECT_DOUBLE_EQ(sys->B(1.0)(1, 0), 1.5);
  std::string path = write("mat_bad.toml", "[system]\nstates = [\"x\", \"v\", \"w\"]\n[table]\nfile = \"mat.csv\"\n"
                                           "[matrices]\nA = { table = \"A\" }\n");
  std::string msg = input_error([&] { load_model(path); });
  EXPECT_EQ(msg, path + ": matrices.A: { table = \"A\" } needs a column 'A_1_3', which no table has");
}

TEST(ModelTable, SeveralTablesAndRelativePaths) {
  std::string dir = temp_dir() + "/nested";
  ASSERT_EQ(ordex_test::run("mkdir -p " + dir).exit_code, 0);
  write("nested/speed.csv", "t,U\n0,10\n1,11\n2,12\n3,13\n4,14\n");
  write("nested/mass.csv", "t,M\n1,100\n5,80\n");
  std::string path = write("nested/two.toml", R"M(
[system]
states = ["x"]
[[table]]
file = "speed.csv"
interpolation = "pchip"
[[table]]
file = "mass.csv"
[define]
k = "U/M"
[matrices]
A = [["-k"]]
)M");
  auto sys = load_model(path);
  // The window is where both tables have data; pchip reproduces linear data exactly.
  EXPECT_EQ(sys->info().window->first, 1.0);
  EXPECT_EQ(sys->info().window->second, 4.0);
  EXPECT_NEAR(sys->A(3.0)(0, 0), -13.0 / 90.0, 1e-15);
  // Breakpoints: the pchip table's ends and every sample of the linear one.
  EXPECT_EQ(sys->info().breakpoints, (std::vector<double>{0, 1, 4, 5}));
  auto copy = sys->clone();
  EXPECT_EQ(copy->A(2.5), sys->A(2.5));
  // A mistake in the second table names it by position.
  std::string bad = write("nested/two_bad.toml", R"M(
[system]
states = ["x"]
[[table]]
file = "speed.csv"
[[table]]
file = "mass.csv"
interpolation = "spline"
[matrices]
A = [["-U"]]
)M");
  EXPECT_NE(input_error([&] { load_model(bad); }).find(bad + ": table[2].interpolation: expected"), std::string::npos);
}

TEST(ModelTable, VehicleModelUsesTheSpeedSchedule) {
  auto sys = load_model(ordex_test::model_path("vehicle_lateral.toml"));
  EXPECT_EQ(sys->info().window->first, 0.0);
  EXPECT_EQ(sys->info().window->second, 20.0);
  EXPECT_EQ(sys->info().breakpoints, (std::vector<double>{0.0, 20.0}));
  // At a sample time (t = 10 s: U = 28 m/s in vehicle_speed.csv) the entries follow the
  // single-track formulas with the model's parameters.
  const double U = 28.0, m = 1480, iz = 2350, lf = 1.15, lr = 1.55, cf = 72000, cr = 81000;
  Eigen::MatrixXd A = sys->A(10.0);
  EXPECT_NEAR(A(0, 0), -(cf + cr) / (m * U), 1e-12);
  EXPECT_NEAR(A(0, 1), (lr * cr - lf * cf) / (m * U) - U, 1e-12);
  EXPECT_NEAR(A(1, 0), (lr * cr - lf * cf) / (iz * U), 1e-12);
  EXPECT_NEAR(A(1, 1), -(lf * lf * cf + lr * lr * cr) / (iz * U), 1e-12);
  EXPECT_NEAR(A(2, 3), U, 1e-12);
  EXPECT_NEAR(sys->B(10.0)(1, 0), lf * cf / iz, 1e-12);
  // Lateral acceleration output = v' + U r: the first row of C, D equals A's first row plus U r.
  Eigen::MatrixXd C = sys->C(10.0);
  EXPECT_NEAR(C(0, 1), A(0, 1) + U, 1e-12);
  EXPECT_NEAR(sys->D(10.0)(0, 0), cf / m, 1e-12);
  EXPECT_THROW(sys->A(20.5), ordex::NumericalError);
}

TEST(ModelTable, ReportDescribesTheModel) {
  auto sys = load_model(ordex_test::model_path("vehicle_lateral.toml"), {{"mass", 1500.0}});
  ordex::ModelReport r = ordex::describe_model(*sys);
  EXPECT_EQ(r.states.size(), 4u);
  ASSERT_EQ(r.tables.size(), 1u);
  EXPECT_EQ(r.tables[0].columns, (std::vector<std::string>{"U"}));
  EXPECT_EQ(r.tables[0].rows, 41);  // vehicle_speed.csv: t = 0, 0.5, ..., 20
  EXPECT_EQ(r.tables[0].interpolation, "pchip");
  // Speed-dependent entries: a11, a12 - U, a21, a22, U in A and a11, a12 in C.
  EXPECT_EQ(r.time_varying_entries, 7);
  EXPECT_EQ(r.entries, 16 + 4 + 8 + 2);
  ordex::Json j = r.to_json();
  EXPECT_EQ(j["parameters"]["mass"].get<double>(), 1500.0);
  EXPECT_EQ(j["window"][1].get<double>(), 20.0);
  EXPECT_EQ(j["tables"][0]["last"].get<double>(), 20.0);
  EXPECT_NE(r.brief().find("mass=1500"), std::string::npos) << r.brief();

  ordex::FunctionSystem code({"x"});
  code.set_A([](double, ordex::MatrixRef a) { a(0, 0) = -1; });
  ordex::ModelReport rc = ordex::describe_model(code);
  EXPECT_EQ(rc.source, "code");
  EXPECT_TRUE(rc.to_json()["time_varying_entries"].is_null());
}

struct BadTable {
  const char* what;
  std::string csv;       // CSV text (written as bad.csv)
  std::string table;     // the [table] section body
  std::string expected;  // a part of the message
};

TEST(ModelTable, MistakesNameTheFileAndLine) {
  const std::string csv_path = temp_dir() + "/bad.csv";
  const std::string std_table = "file = \"bad.csv\"\n";
  const std::vector<BadTable> cases = {
      {"non-numeric field", "t,U\n0,1\n1,fast\n", std_table, csv_path + ":3: column 'U': 'fast' is not a finite number"},
      {"missing field", "# speed\nt,U\n0,1\n1\n", std_table, csv_path + ":4: 1 fields, the header has 2"},
      {"time not increasing", "t,U\n0,1\n2,1\n1,1\n", std_table, csv_path + ":4: t is not strictly increasing"},
      {"first column not t", "# c\ntime,U\n0,1\n1,2\n", std_table, csv_path + ":2: the first column must be named 't', not 'time'"},
      {"column not a symbol", "t,U,2W\n0,1,1\n1,2,2\n", std_table, csv_path + ":1: column 3: '2W' does not start with a letter"},
      {"column named like a function", "t,exp\n0,1\n1,2\n", std_table, csv_path + ":1: column 2: 'exp' is a function name"},
      {"duplicate column", "t,U,U\n0,1,1\n1,2,2\n", std_table, csv_path + ":1: column 'U' appears twice"},
      {"only t", "t\n0\n1\n", std_table, csv_path + ":1: the table needs column t and at least one more column"},
      {"too few rows for pchip", "t,U\n0,1\n1,2\n2,3\n", std_table + "interpolation = \"pchip\"\n",
       csv_path + ": 3 data rows; pchip interpolation needs at least 4"},
      {"one row", "t,U\n0,1\n", std_table, csv_path + ": 1 data rows; linear interpolation needs at least 2"},
      {"unknown interpolation", "t,U\n0,1\n1,2\n", std_table + "interpolation = \"cubic\"\n",
       ": table.interpolation: expected \"linear\" or \"pchip\""},
      {"unknown outside", "t,U\n0,1\n1,2\n", std_table + "outside = \"clamp\"\n", ": table.outside: expected \"error\" or \"hold\""},
      {"unknown key", "t,U\n0,1\n1,2\n", std_table + "columns = [\"U\"]\n", ": table.columns: unknown key"},
      {"no file", "t,U\n0,1\n1,2\n", "interpolation = \"linear\"\n", ": table.file: missing"},
      {"missing csv", "t,U\n0,1\n1,2\n", "file = \"absent.csv\"\n", temp_dir() + "/absent.csv: no such CSV file"},
  };
  for (const BadTable& c : cases) {
    write("bad.csv", c.csv);
    std::string path = write("bad.toml", "[system]\nstates = [\"x\"]\n[table]\n" + c.table +
                                             "[matrices]\nA = [[\"-U\"]]\n");
    std::string msg = input_error([&] { load_model(path); });
    EXPECT_NE(msg.find(c.expected), std::string::npos) << c.what << "\n  got:      " << msg
                                                       << "\n  expected: " << c.expected;
  }
  // A column may not reuse a parameter's name.
  write("bad.csv", "t,k\n0,1\n1,2\n");
  std::string path = write("clash.toml", "[system]\nstates = [\"x\"]\n[parameters]\nk = 1\n[table]\nfile = \"bad.csv\"\n"
                                         "[matrices]\nA = [[\"-k\"]]\n");
  EXPECT_NE(input_error([&] { load_model(path); }).find(": table: column 'k' of " + csv_path + " has the same name as parameters.k"),
            std::string::npos);
}

}  // namespace
