// The sweep's library parts: parameters set in place on a loaded model, grid and sample points,
// the table's rows and resuming from them.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <limits>

#include "io/errors.hpp"
#include "job_support.hpp"
#include "model/model_file.hpp"
#include "support.hpp"
#include "sweep/sweep.hpp"

using namespace ordex;
using namespace ordex_test;

namespace {

std::string write_model(const std::string& name, const std::string& text) {
  const std::string path = temp_dir() + "/" + name;
  write_file(path, text);
  return path;
}

const char* const kOscillator =
    "[system]\nstates = [\"x\", \"v\"]\n[parameters]\nomega = 2.0\nzeta = 0.1\nq = 0.3\n"
    "[define]\nw2 = \"omega^2\"\nstiffness = \"w2 - 2*q*cos(2*t)\"\n"
    "[matrices]\nA = [[0, 1], [\"-stiffness\", \"-2*zeta*omega\"]]\n";

}  // namespace

// Setting parameters in place gives the matrices of the model loaded with those values (--set),
// through the parameter-only definition w2 and entry -2 zeta omega as well as the time-dependent
// stiffness.
TEST(SweepCore, ParametersSetInPlaceMatchAFreshLoad) {
  const std::string path = write_model("osc.toml", kOscillator);
  const auto loaded = load_model(path);
  const auto free = make_sweep_system(*loaded, {"omega", "q"});
  EXPECT_EQ(free->time_varying_entries(), 1);  // only the stiffness follows t
  for (const auto& [omega, q] : std::vector<std::pair<double, double>>{{3.0, 0.5}, {0.5, 1.25}, {2.0, 0.0}}) {
    free->set_parameters({omega, q});
    const auto fresh = load_model(path, {{"omega", omega}, {"q", q}});
    for (double t : {0.0, 0.4, 2.5}) {
      const Eigen::MatrixXd a = free->A(t), b = fresh->A(t);
      EXPECT_NEAR((a - b).norm(), 0.0, 1e-14 * b.norm()) << omega << " " << q << " " << t;
      // Closed form: A = [[0, 1], [-(omega^2 - 2 q cos 2t), -2 zeta omega]].
      EXPECT_NEAR(a(1, 0), -(omega * omega - 2 * q * std::cos(2 * t)), 1e-14 * (1 + omega * omega));
      EXPECT_EQ(a(1, 1), -2 * 0.1 * omega);
    }
    EXPECT_EQ(free->symbol_value("w2", 0), omega * omega);
    EXPECT_EQ(free->info().parameters[0].second, omega);
    // A clone (one per thread) carries the values in effect.
    const auto copy = free->clone();
    EXPECT_EQ((copy->A(0.7) - free->A(0.7)).norm(), 0.0);
  }
}

TEST(SweepCore, ParametersOfThePeriodOrWindowAreRefused) {
  const std::string path = write_model(
      "periodic.toml",
      "[system]\nstates = [\"x\"]\nperiod = \"2*pi/omega\"\n[window]\nfrom = 0\nto = \"span\"\n"
      "[parameters]\nomega = 2.0\nspan = 3.0\nk = 1.0\n[matrices]\nA = [[\"-k*cos(omega*t)\"]]\n");
  const auto loaded = load_model(path);
  EXPECT_NE(input_error_of([&] { make_sweep_system(*loaded, {"omega"}); }).find("system.period is computed from parameter 'omega'"),
            std::string::npos);
  EXPECT_NE(input_error_of([&] { make_sweep_system(*loaded, {"span"}); }).find("window.to"), std::string::npos);
  EXPECT_NE(input_error_of([&] { make_sweep_system(*loaded, {"nope"}); }).find("no parameter 'nope'"), std::string::npos);
  EXPECT_EQ(input_error_of([&] { make_sweep_system(*loaded, {"k"}); }), "");
}

// A value that makes a parameter-only entry non-finite fails that point with the key named;
// the next values work again.
TEST(SweepCore, NonFiniteValuesFailThePointOnly) {
  const std::string path = write_model("sqrt.toml", "[system]\nstates = [\"x\"]\n[parameters]\nd = 1.0\n"
                                                    "[matrices]\nA = [[\"-sqrt(d)\"]]\n");
  const auto sys = make_sweep_system(*load_model(path), {"d"});
  EXPECT_NE(input_error_of([&] { sys->set_parameters({-1.0}); }).find("matrices.A[1][1]"), std::string::npos);
  sys->set_parameters({4.0});
  EXPECT_EQ(sys->A(0.0)(0, 0), -2.0);
}

TEST(SweepCore, GridPointsRunTheLastNameFastest) {
  const SweepPoints p = SweepPoints::grid({parse_grid_axis("a=0:1:5"), parse_grid_axis("b = -pi : pi : 3")});
  ASSERT_EQ(p.size(), 15u);
  EXPECT_EQ(p.values(0), (std::vector<double>{0.0, -M_PI}));
  EXPECT_EQ(p.values(1), (std::vector<double>{0.0, 0.0}));
  EXPECT_EQ(p.values(5), (std::vector<double>{0.25, M_PI}));
  EXPECT_EQ(p.values(14), (std::vector<double>{1.0, M_PI}));
  EXPECT_EQ(parse_grid_axis("c=2:2:1").count, 1);
  EXPECT_NE(input_error_of([] { parse_grid_axis("c=0:1:1"); }).find("COUNT 1 needs FROM equal to TO"), std::string::npos);
  EXPECT_NE(input_error_of([] { parse_grid_axis("c=0:1:2.5"); }).find("not a whole number"), std::string::npos);
}

// Samples: point k depends only on (seed, k); the draws have the moments of their
// distributions (uniform on [low, high]: mean (low+high)/2, variance (high-low)^2/12; normal:
// mean and sd), checked at 5 standard errors over 20000 points.
TEST(SweepCore, SamplesDependOnSeedAndIndexWithTheRightMoments) {
  std::vector<SampleDistribution> plan(2);
  plan[0].name = "u";
  plan[0].kind = SampleDistribution::Kind::Uniform;
  plan[0].a = 1;
  plan[0].b = 3;
  plan[1].name = "g";
  plan[1].kind = SampleDistribution::Kind::Normal;
  plan[1].a = -0.5;
  plan[1].b = 0.2;
  const std::size_t n = 20000;
  const SweepPoints p = SweepPoints::samples(plan, n, 42);
  const SweepPoints again = SweepPoints::samples(plan, 10, 42), other = SweepPoints::samples(plan, 10, 43);
  EXPECT_EQ(p.values(7), again.values(7));
  EXPECT_NE(p.values(7), other.values(7));
  double su = 0, su2 = 0, sg = 0, sg2 = 0;
  for (std::size_t k = n; k-- > 0;) {  // any order gives the same values
    const auto v = p.values(k);
    ASSERT_GE(v[0], 1.0);
    ASSERT_LE(v[0], 3.0);
    su += v[0];
    su2 += v[0] * v[0];
    sg += v[1];
    sg2 += v[1] * v[1];
  }
  const double mu = su / n, vu = su2 / n - mu * mu, mg = sg / n, vg = sg2 / n - mg * mg;
  EXPECT_NEAR(mu, 2.0, 5 * std::sqrt(1.0 / 3 / n));
  EXPECT_NEAR(vu, 4.0 / 12, 5 * 0.3 / std::sqrt(double(n)));
  EXPECT_NEAR(mg, -0.5, 5 * 0.2 / std::sqrt(double(n)));
  EXPECT_NEAR(std::sqrt(vg), 0.2, 5 * 0.2 / std::sqrt(2.0 * n));
}

TEST(SweepCore, RowsAndResume) {
  PointResult ok{{1.0 / 3, std::nan("")}, ""}, bad{{std::nan(""), std::nan("")}, "x, \"y\"\nz"};
  EXPECT_EQ(sweep_row({0.1, -2}, ok), "0.1,-2,0.3333333333333333,nan,");
  EXPECT_EQ(sweep_row({0.1}, bad), "0.1,nan,nan,\"x, \"\"y\"\" z\"");
  // Shortest round trip: the text reads back to the same double.
  EXPECT_EQ(std::stod("0.3333333333333333"), 1.0 / 3);
  EXPECT_EQ(std::stod(sweep_row_prefix({0.1 + 0.2}).substr(0, 19)), 0.1 + 0.2);
  const SweepPoints p = SweepPoints::grid({parse_grid_axis("a=0:1:3")});
  const std::string header = sweep_header({"a"}, {"f"});
  const std::string text = header + "\n0,1,\n0.5,2,\n1,3";  // the last row unfinished
  EXPECT_EQ(resumable_rows(text, "t.csv", header, p), (std::vector<std::string>{"0,1,", "0.5,2,"}));
  EXPECT_NE(input_error_of([&] { resumable_rows("a,g,error\n", "t.csv", header, p); }).find("t.csv: line 1"),
            std::string::npos);
  EXPECT_NE(input_error_of([&] { resumable_rows(header + "\n0,1,\n0.25,1,\n", "t.csv", header, p); }).find("line 3"),
            std::string::npos);
}

// A row read back (a resumed sweep's rows for --hdf5) gives the same doubles, bit for bit, and
// the error unquoted; newlines were folded to spaces by the CSV.
TEST(SweepCore, RowsReadBack) {
  const PointResult ok{{1.0 / 3, std::nan(""), -1e-300, std::numeric_limits<double>::infinity(), 0.1 + 0.2}, ""};
  const PointResult back = parse_sweep_row(sweep_row({0.1, -2}, ok), 2, 5);
  ASSERT_EQ(back.figures.size(), 5u);
  for (std::size_t i = 0; i < 5; ++i)
    if (!std::isnan(ok.figures[i])) {
      EXPECT_EQ(back.figures[i], ok.figures[i]) << i;
    }
  EXPECT_TRUE(std::isnan(back.figures[1]));
  EXPECT_EQ(back.error, "");
  const PointResult bad{{std::nan("")}, "x, \"y\"\nz"};
  EXPECT_EQ(parse_sweep_row(sweep_row({0.5}, bad), 1, 1).error, "x, \"y\" z");
  EXPECT_EQ(parse_sweep_row(sweep_row({0.5}, PointResult{{2}, "plain"}), 1, 1).error, "plain");
  for (const char* broken : {"0.5,", "0.5,x,", "0.5,1,\"open", "0.5,1,\"a\"b\""})
    EXPECT_FALSE(input_error_of([&] { parse_sweep_row(broken, 1, 1); }).empty()) << broken;
}

// Results that finish out of order are handed on in order.
TEST(SweepCore, OrderedResultsEmitInPositionOrder) {
  std::vector<std::size_t> seen;
  OrderedResults o([&](std::size_t k, const PointResult&) { seen.push_back(k); });
  for (std::size_t k : {2, 0, 3, 1, 5, 4}) o.add(k, {});
  EXPECT_EQ(seen, (std::vector<std::size_t>{0, 1, 2, 3, 4, 5}));
}

// The model is read once: with its file and its table's file gone, parameters still change in
// place and threads still get their copies (no file is read again, no expression re-parsed
// from disk).
TEST(SweepCore, ParameterChangesReadNoFile) {
  const std::string dir = temp_dir() + "/gone";
  ASSERT_EQ(std::system(("mkdir -p " + dir).c_str()), 0);
  write_file(dir + "/speed.csv", "t,U\n0,10\n5,20\n10,20\n");
  write_file(dir + "/m.toml", "[system]\nstates = [\"x\"]\n[table]\nfile = \"speed.csv\"\ninterpolation = \"linear\"\n"
                              "[parameters]\nk = 1.0\n[matrices]\nA = [[\"-k*U\"]]\n");
  const auto loaded = load_model(dir + "/m.toml");
  const auto sys = make_sweep_system(*loaded, {"k"});
  ASSERT_EQ(std::remove((dir + "/m.toml").c_str()), 0);
  ASSERT_EQ(std::remove((dir + "/speed.csv").c_str()), 0);
  sys->set_parameters({0.5});
  EXPECT_EQ(sys->A(2.5)(0, 0), -0.5 * 15);  // U(2.5) = 15 by linear interpolation
  const auto copy = sys->clone();
  EXPECT_EQ(copy->A(7.0)(0, 0), -0.5 * 20);
}
