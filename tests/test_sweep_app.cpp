// ordex-sweep end to end: a Mathieu stability chart against the characteristic values of
// scipy.special.mathieu_a / mathieu_b (Abramowitz & Stegun ch. 20), identical tables whatever
// the threads or MPI ranks, failing points recorded, resume, and bad input.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdlib>
#include <nlohmann/json.hpp>
#include <sstream>
#include <vector>

#include "support.hpp"

using namespace ordex_test;

namespace {

const std::string kMathieu = model_path("mathieu.toml");

std::vector<std::vector<std::string>> csv_rows(const std::string& text) {
  std::vector<std::vector<std::string>> rows;
  std::istringstream in(text);
  std::string line;
  while (std::getline(in, line)) {
    std::vector<std::string> cells;
    std::string cell;
    std::istringstream ls(line);
    while (std::getline(ls, cell, ',')) cells.push_back(cell);
    if (!line.empty() && line.back() == ',') cells.push_back("");
    rows.push_back(cells);
  }
  return rows;
}

RunResult sweep(const std::string& args) { return run_app("ordex-sweep", args); }

std::string mpirun_prefix() {
#ifdef ORDEX_MPIEXEC
  // As root OpenMPI refuses to start without these; on 2 cores -np 3 needs --oversubscribe.
  return std::string("OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1 ") + ORDEX_MPIEXEC +
         " --oversubscribe ";
#else
  return "";
#endif
}

}  // namespace

// Stable (bounded) points have multipliers on the unit circle (det M = 1, no damping); unstable
// ones one multiplier beyond it. The verdict of each point away from a boundary (0.05 in a)
// must match the Ince-Strutt chart built from scipy's characteristic values.
TEST(SweepApp, MathieuChartMatchesCharacteristicValues) {
  const std::string csv = temp_dir() + "/mathieu_chart.csv";
  const RunResult r = sweep("--model " + kMathieu + " --job floquet --grid a=-0.5:6.5:15 --grid q=0.25:2:4 "
                            "--rtol 1e-10 --atol 1e-12 --threads 2 --csv " + csv);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const auto rows = csv_rows(read_file(csv));
  ASSERT_EQ(rows.size(), 1u + 60u);
  EXPECT_EQ(rows[0], (std::vector<std::string>{"a", "q", "max_abs_multiplier", "stable", "error"}));
  std::string points;
  for (std::size_t i = 1; i < rows.size(); ++i) points += " " + rows[i][0] + "," + rows[i][1];
  const RunResult ref = run_python("sweep_mathieu_chart.py", "0.05" + points);
  ASSERT_EQ(ref.exit_code, 0) << ref.err;
  std::istringstream verdicts(ref.out);
  int checked_stable = 0, checked_unstable = 0;
  for (std::size_t i = 1; i < rows.size(); ++i) {
    std::string verdict;
    ASSERT_TRUE(verdicts >> verdict);
    EXPECT_EQ(rows[i][4], "") << "point " << i;
    const double mu = std::stod(rows[i][2]);
    if (verdict == "stable") {
      EXPECT_LT(mu, 1 + 1e-6) << "a, q = " << rows[i][0] << ", " << rows[i][1];
      ++checked_stable;
    } else if (verdict == "unstable") {
      EXPECT_GT(mu, 1 + 1e-3) << "a, q = " << rows[i][0] << ", " << rows[i][1];
      ++checked_unstable;
    }
  }
  // The grid crosses several tongues: both verdicts are well represented.
  EXPECT_GE(checked_stable, 15);
  EXPECT_GE(checked_unstable, 15);
}

TEST(SweepApp, TableIsTheSameForOneAndTwoThreads) {
  const std::string dir = temp_dir();
  const std::string args = "--model " + kMathieu + " --job floquet --grid a=0:4:9 --grid q=0.1:1.5:3 --csv ";
  ASSERT_EQ(sweep(args + dir + "/t1.csv --threads 1").exit_code, 0);
  ASSERT_EQ(sweep(args + dir + "/t2.csv --threads 2").exit_code, 0);
  EXPECT_EQ(read_file(dir + "/t1.csv"), read_file(dir + "/t2.csv"));
  EXPECT_FALSE(file_exists(dir + "/t2.csv.partial"));
  // Random samples too: point k's values depend on the seed and k only.
  write_file(dir + "/plan.toml", "[a]\ndistribution = \"uniform\"\nlow = 0\nhigh = 4\n[q]\ndistribution = \"normal\"\n"
                                 "mean = 0.8\nsd = 0.2\n");
  const std::string sargs = "--model " + kMathieu + " --job floquet --sample " + dir + "/plan.toml --runs 24 --csv ";
  ASSERT_EQ(sweep(sargs + dir + "/s1.csv --seed 7 --threads 1").exit_code, 0);
  ASSERT_EQ(sweep(sargs + dir + "/s2.csv --seed 7 --threads 2").exit_code, 0);
  EXPECT_EQ(read_file(dir + "/s1.csv"), read_file(dir + "/s2.csv"));
  ASSERT_EQ(sweep(sargs + dir + "/s3.csv --seed 8").exit_code, 0);
  EXPECT_NE(read_file(dir + "/s1.csv"), read_file(dir + "/s3.csv"));  // the seed matters
}

TEST(SweepApp, TableIsTheSameOnMpiRanks) {
#ifndef ORDEX_MPIEXEC
  GTEST_SKIP() << "ordex-sweep was built without MPI (ORDEX_MPI=OFF): ranks are not tested";
#else
  const std::string dir = temp_dir();
  const std::string args = " --model " + kMathieu + " --job floquet --grid a=0:4:9 --grid q=0.1:1.5:3 --csv ";
  ASSERT_EQ(sweep(args + dir + "/m0.csv --threads 2").exit_code, 0);
  for (int np : {1, 2, 3}) {
    const std::string out = dir + "/m" + std::to_string(np) + ".csv";
    const RunResult r = run(mpirun_prefix() + "-np " + std::to_string(np) + " " + ORDEX_BIN_DIR + "/ordex-sweep" + args +
                            out + " --json " + dir + "/m.json");
    if (np == 1 && r.exit_code != 0 && r.err.find("ordex-sweep") == std::string::npos)
      GTEST_SKIP() << "mpirun does not start here: " << r.err;
    ASSERT_EQ(r.exit_code, 0) << r.err;
    EXPECT_EQ(read_file(dir + "/m0.csv"), read_file(out)) << np << " ranks";
    const auto summary = nlohmann::json::parse(read_file(dir + "/m.json"));
    EXPECT_EQ(summary["ranks"].get<int>(), np);
    EXPECT_EQ(summary["computed"].get<int>(), 27);
  }
#endif
}

// A point whose parameters make an entry non-finite (sqrt of a negative damping) is recorded
// with its reason; the others are computed.
TEST(SweepApp, FailingPointIsRecorded) {
  const std::string dir = temp_dir();
  write_file(dir + "/damped.toml",
             "[system]\nstates = [\"x\", \"v\"]\nperiod = \"pi\"\n[parameters]\na = 2.0\nq = 0.5\nd = 0.01\n"
             "[matrices]\nA = [[0, 1], [\"-(a - 2*q*cos(2*t))\", \"-sqrt(d)\"]]\n");
  const RunResult r = sweep("--model " + dir + "/damped.toml --job floquet --grid d=-0.01:0.03:5 --csv " + dir +
                            "/damped.csv --json " + dir + "/damped.json");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const auto rows = csv_rows(read_file(dir + "/damped.csv"));
  ASSERT_EQ(rows.size(), 6u);
  EXPECT_EQ(rows[1][0], "-0.01");
  EXPECT_EQ(rows[1][1], "nan");
  EXPECT_NE(rows[1][3].find("matrices.A[2][2]"), std::string::npos) << rows[1][3];
  for (std::size_t i = 2; i < rows.size(); ++i) {
    EXPECT_EQ(rows[i][3], "") << i;
    // Damping sqrt(d) >= 0: det M = exp(-sqrt(d) pi) (Liouville), so the largest multiplier of
    // this point, inside the stable band at a = 2, has modulus exp(-sqrt(d) pi / 2).
    EXPECT_NEAR(std::stod(rows[i][1]), std::exp(-std::sqrt(std::stod(rows[i][0])) * M_PI / 2), 1e-6) << i;
  }
  const auto summary = nlohmann::json::parse(read_file(dir + "/damped.json"));
  EXPECT_EQ(summary["failed"].get<int>(), 1);
  EXPECT_EQ(summary["first_failures"][0]["point"].get<int>(), 1);
}

// An interrupted sweep (its table cut in the middle of a row) resumes: the same table, and only
// the missing points computed.
TEST(SweepApp, ResumeComputesOnlyTheMissingRows) {
  const std::string dir = temp_dir();
  const std::string csv = dir + "/resume.csv";
  const std::string args = "--model " + kMathieu + " --job floquet --grid a=0:3:4 --grid q=0.2:1:3 --csv " + csv +
                           " --json " + dir + "/resume.json";
  ASSERT_EQ(sweep(args).exit_code, 0);
  const std::string full = read_file(csv);
  // Keep the header, 5 rows and half of the sixth.
  std::size_t cut = 0;
  for (int i = 0; i < 6; ++i) cut = full.find('\n', cut) + 1;
  write_file(csv, full.substr(0, cut + 7));
  const RunResult r = sweep(args + " --resume");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_EQ(read_file(csv), full);
  const auto summary = nlohmann::json::parse(read_file(dir + "/resume.json"));
  EXPECT_EQ(summary["resumed"].get<int>(), 5);
  EXPECT_EQ(summary["computed"].get<int>(), 7);
  EXPECT_NE(r.err.find("7 computed, 5 resumed"), std::string::npos) << r.err;
  // A table of another sweep is not resumed from.
  const RunResult other = sweep("--model " + kMathieu + " --job floquet --grid a=0:3:5 --grid q=0.2:1:3 --csv " + csv +
                                " --resume");
  EXPECT_EQ(other.exit_code, 2);
  EXPECT_NE(other.err.find("another sweep"), std::string::npos) << other.err;
  EXPECT_EQ(read_file(csv), full);  // and left as it was
}

TEST(SweepApp, BadInputExitsTwoNamingIt) {
  const std::string dir = temp_dir();
  const std::string base = "--model " + kMathieu + " --job floquet ";
  const std::string model_text = read_file(kMathieu);
  struct Case {
    std::string args, expected;
  };
  write_file(dir + "/bad_plan.toml", "[q]\ndistribution = \"normal\"\nmean = 0.5\nsd = -1\n");
  write_file(dir + "/odd_plan.toml", "[q]\ndistribution = \"lognormal\"\nmean = 0.5\n");
  for (const Case& c : std::vector<Case>{
           {"--grid q=0:1:0", "--grid 'q=0:1:0': COUNT 0 is not at least 1"},
           {"--grid q=0:1", "--grid 'q=0:1': expected NAME=FROM:TO:COUNT"},
           {"--grid q=0:x:3", "--grid 'q=0:x:3': TO"},
           {"--grid w=0:1:3", "--grid w: the model has no parameter 'w'"},
           {"--grid q=0:1:3 --grid q=1:2:3", "--grid: parameter 'q' is given twice"},
           {"--sample " + dir + "/bad_plan.toml --runs 3", "bad_plan.toml: q.sd: -1 is negative"},
           {"--sample " + dir + "/odd_plan.toml --runs 3", "odd_plan.toml: q.distribution"},
           {"--sample " + dir + "/bad_plan.toml", "--runs N is required"},
           {"--grid q=0:1:3 --set q=2", "--set q: the sweep varies 'q' (--grid)"},
           {"--grid q=0:1:3 --csv " + kMathieu, "mathieu.toml"},  // an output naming the model
           {"", "--grid NAME=FROM:TO:COUNT or --sample PATH is required"}}) {
    const RunResult r = sweep(base + c.args);
    EXPECT_EQ(r.exit_code, 2) << c.args;
    EXPECT_NE(r.err.find(c.expected), std::string::npos) << c.args << "\n" << r.err;
    EXPECT_EQ(line_count(r.err), 1) << r.err;
  }
  EXPECT_EQ(read_file(kMathieu), model_text);
  const RunResult nojob = sweep("--model " + kMathieu + " --grid q=0:1:3");
  EXPECT_EQ(nojob.exit_code, 2);
  EXPECT_NE(nojob.err.find("--job"), std::string::npos);
}

// The other jobs' key figures at every point against closed forms.
TEST(SweepApp, GramianRegulateAndRespondFiguresMatchClosedForms) {
  const std::string dir = temp_dir();
  const std::string tests = ORDEX_TESTS_DIR;
  // Double integrator p' = v, v' = g f over [0, 2]: W_c = g^2 [[T^3/3, -T^2/2], [-T^2/2, T]]
  // (Phi(0, s) B = g (-s, 1)), eigenvalues g^2 (14 -+ sqrt(148)) / 6 at T = 2.
  RunResult r = sweep("--model " + tests + "/data/gramian_double_integrator.toml --job gramian --grid gain=0.5:2:4 "
                      "--rtol 1e-10 --atol 1e-14 --csv " + dir + "/g.csv");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  auto rows = csv_rows(read_file(dir + "/g.csv"));
  ASSERT_EQ(rows.size(), 5u);
  EXPECT_EQ(rows[0], (std::vector<std::string>{"gain", "rank", "lambda_min", "lambda_max", "condition", "weakest_p",
                                               "weakest_v", "error"}));
  for (std::size_t i = 1; i < rows.size(); ++i) {
    const double g2 = std::pow(std::stod(rows[i][0]), 2);
    EXPECT_EQ(rows[i][1], "2");
    EXPECT_NEAR(std::stod(rows[i][2]), g2 * (14 - std::sqrt(148.0)) / 6, 1e-7 * g2);
    EXPECT_NEAR(std::stod(rows[i][3]), g2 * (14 + std::sqrt(148.0)) / 6, 1e-7 * g2);
  }
  // Scalar LQR x' = a x + b u, Q = R = 1, Qf = 0 over [0, 3]: with tau = T - t the Riccati
  // equation dp/dtau = 2 a p - b^2 p^2 + 1, p(0) = 0 has p = sinh(beta tau) / (beta cosh(beta tau)
  // - a sinh(beta tau)), beta = sqrt(a^2 + b^2) (the scalar Riccati closed form).
  r = sweep("--model " + tests + "/data/riccati_scalar.toml --job regulate --grid b=1:2:3 --x0 2 --csv " + dir + "/r.csv");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  rows = csv_rows(read_file(dir + "/r.csv"));
  ASSERT_EQ(rows.size(), 4u);
  EXPECT_EQ(rows[0], (std::vector<std::string>{"b", "p0_max_eigenvalue", "cost", "closed_loop_ok", "error"}));
  for (std::size_t i = 1; i < rows.size(); ++i) {
    const double a = 0.7, b = std::stod(rows[i][0]), beta = std::sqrt(a * a + b * b), tau = 3;
    const double p0 = std::sinh(beta * tau) / (beta * std::cosh(beta * tau) - a * std::sinh(beta * tau));
    EXPECT_NEAR(std::stod(rows[i][1]), p0, 1e-6 * p0);
    EXPECT_NEAR(std::stod(rows[i][2]), 4 * p0, 4e-6 * p0);  // x0' P0 x0 with x0 = 2
    EXPECT_EQ(rows[i][3], "1");
  }
  // Unforced x'' + a x = 0 (the pumped oscillator with q = 0) from (1, 0) over [0, 2 pi]:
  // x = cos(w t), v = -w sin(w t), w = sqrt(a).
  write_file(dir + "/zero.csv", "t,f\n0,0\n7,0\n");
  r = sweep("--model " + model_path("pumped_oscillator.toml") + " --job respond --set q=0 --grid a=0.5:2:4 --x0 1,0 "
            "--input " + dir + "/zero.csv --rtol 1e-11 --atol 1e-13 --csv " + dir + "/x.csv");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  rows = csv_rows(read_file(dir + "/x.csv"));
  ASSERT_EQ(rows.size(), 5u);
  for (std::size_t i = 1; i < rows.size(); ++i) {
    const double w = std::sqrt(std::stod(rows[i][0])), t = 2 * M_PI;
    EXPECT_NEAR(std::stod(rows[i][1]), std::cos(w * t), 1e-7);
    EXPECT_NEAR(std::stod(rows[i][2]), -w * std::sin(w * t), 1e-7);
  }
}

// The summary's header names the method the floquet job integrates with, as ordex-propagate's
// summary does for the same model and options (auto is resolved, not echoed); job_settings keeps
// the request.
TEST(SweepApp, SummaryHeaderNamesTheMethodUsed) {
  for (const std::string method : {"", " --method adams"}) {
    const RunResult s = sweep("--model " + kMathieu + " --job floquet --grid a=1:2:2 --json -" + method);
    ASSERT_EQ(s.exit_code, 0) << s.err;
    const RunResult p = run_app("ordex-propagate", "--model " + kMathieu + " --json -" + method);
    ASSERT_EQ(p.exit_code, 0) << p.err;
    const auto js = nlohmann::json::parse(s.out), jp = nlohmann::json::parse(p.out);
    EXPECT_EQ(js["method"], jp["method"]) << method;
    EXPECT_NE(js["method"], "auto");
    EXPECT_EQ(js["job_settings"]["method"], method.empty() ? "auto" : "adams");
  }
}
