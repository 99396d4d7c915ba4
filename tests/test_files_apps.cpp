// The apps never cost the user a file: an output naming one of the run's inputs is refused
// with the input intact, standard output and devices are written in place, a write error on
// standard output is an error, an interrupted run leaves nothing, and hard inputs (/dev/zero,
// folders, unusable names, names that are not UTF-8) end in one clear line with exit 2.
#include <gtest/gtest.h>

#include <algorithm>
#include <chrono>
#include <csignal>
#include <dirent.h>
#include <nlohmann/json.hpp>
#include <sys/stat.h>
#include <sys/wait.h>
#include <thread>

#include "support.hpp"

namespace {

using ordex_test::read_file;
using ordex_test::run_app;

// A plant every app accepts (inputs for respond, regulate and gramian; an output for respond).
const char* kPlant =
    "[system]\nstates = [\"p\", \"v\"]\ninputs = [\"f\"]\noutputs = [\"p_meas\"]\n"
    "[window]\nfrom = 0\nto = 2\n[matrices]\nA = [[0, 1], [-1, -0.2]]\nB = [[0], [1]]\nC = [[1, 0]]\n";

struct Workspace {
  std::string dir, model, input, weights, times, table_model, table;
};

Workspace make_workspace(const std::string& name) {
  Workspace w;
  w.dir = ordex_test::temp_dir() + "/" + name;
  std::string cmd = "rm -rf '" + w.dir + "' && mkdir -p '" + w.dir + "'";
  EXPECT_EQ(std::system(cmd.c_str()), 0);
  w.model = w.dir + "/plant.toml";
  ordex_test::write_file(w.model, kPlant);
  w.input = w.dir + "/push.csv";
  ordex_test::write_file(w.input, "t,f\n0,0\n1,1\n2,0\n");
  w.weights = w.dir + "/weights.toml";
  ordex_test::write_file(w.weights, "Q = [1, 1]\nR = [1]\n");
  w.times = w.dir + "/times.txt";
  ordex_test::write_file(w.times, "t\n0\n1\n2\n");
  w.table = w.dir + "/stiffness.csv";
  ordex_test::write_file(w.table, "t,k\n0,1\n1,2\n2,1.5\n");
  w.table_model = w.dir + "/tabulated.toml";
  ordex_test::write_file(w.table_model,
                         "[system]\nstates = [\"x\"]\n[table]\nfile = \"stiffness.csv\"\n[matrices]\nA = [[\"-k\"]]\n");
  return w;
}

// Runs APP ARGS and checks the refusal: exit 2, one line naming the input, the input unchanged.
void expect_refused(const std::string& app, const std::string& args, const std::string& input) {
  const std::string before = read_file(input);
  ordex_test::RunResult r = run_app(app, args);
  EXPECT_EQ(r.exit_code, 2) << app << " " << args << "\n" << r.err;
  EXPECT_EQ(ordex_test::line_count(r.err), 1) << r.err;
  EXPECT_NE(r.err.find("is an input of this run"), std::string::npos) << r.err;
  EXPECT_EQ(read_file(input), before) << input << " was changed";
  EXPECT_FALSE(before.empty());
}

TEST(DataLoss, OutputsNamingAnInputAreRefused) {
  Workspace w = make_workspace("dataloss");
  const std::string& m = w.model;
  expect_refused("ordex-propagate", "--model " + m + " --csv " + m, m);
  expect_refused("ordex-propagate", "--model " + m + " --json " + m, m);
  expect_refused("ordex-respond", "--model " + m + " --input " + w.input + " --csv " + w.input, w.input);
  expect_refused("ordex-respond", "--model " + m + " --input " + w.input + " --json " + m, m);
  expect_refused("ordex-regulate", "--model " + m + " --weights " + w.weights + " --csv " + w.weights, w.weights);
  expect_refused("ordex-discretize", "--model " + m + " --times " + w.times + " --csv " + w.times, w.times);
  expect_refused("ordex-gramian", "--model " + m + " --x0 0,0 --xf 1,0 --input-out " + m, m);
  // Another spelling of the same file, a symbolic link, a hard link.
  expect_refused("ordex-propagate", "--model " + m + " --json " + w.dir + "/../dataloss/plant.toml", m);
  ASSERT_EQ(::symlink(m.c_str(), (w.dir + "/link.toml").c_str()), 0);
  expect_refused("ordex-propagate", "--model " + m + " --csv " + w.dir + "/link.toml", m);
  ASSERT_EQ(::link(m.c_str(), (w.dir + "/hard.toml").c_str()), 0);
  expect_refused("ordex-propagate", "--model " + m + " --json " + w.dir + "/hard.toml", m);
  // A table the model reads is an input too.
  expect_refused("ordex-propagate", "--model " + w.table_model + " --csv " + w.table, w.table);
}

TEST(SafeWriting, WriteErrorOnStandardOutputIsAnError) {
  struct stat st {};
  if (::stat("/dev/full", &st) != 0) GTEST_SKIP() << "no /dev/full";
  Workspace w = make_workspace("stdout_full");
  ordex_test::RunResult r = ordex_test::run(std::string(ORDEX_BIN_DIR) + "/ordex-propagate --model " + w.model +
                                            " --json - > /dev/full");
  // A file that cannot be written is bad usage (exit 2, CONTRACT.md), like an unwritable path.
  EXPECT_EQ(r.exit_code, 2) << r.err;
  EXPECT_NE(r.err.find("standard output: cannot write (No space left on device)"), std::string::npos) << r.err;
}

TEST(SafeWriting, FifoAndDeviceOutputsAreWrittenInPlace) {
  Workspace w = make_workspace("fifo_out");
  const std::string fifo = w.dir + "/to_reader";
  ASSERT_EQ(::mkfifo(fifo.c_str(), 0600), 0);
  std::string got;
  std::thread reader([&] { got = read_file(fifo); });
  ordex_test::RunResult r = run_app("ordex-propagate", "--model " + w.model + " --samples 3 --csv " + fifo);
  reader.join();
  EXPECT_EQ(r.exit_code, 0) << r.err;
  EXPECT_EQ(got.rfind("t,phi_1_1,phi_1_2,phi_2_1,phi_2_2\n", 0), 0u) << got;
  EXPECT_EQ(ordex_test::line_count(got), 4);
  struct stat st {};
  ASSERT_EQ(::lstat(fifo.c_str(), &st), 0);
  EXPECT_TRUE(S_ISFIFO(st.st_mode));
  r = run_app("ordex-propagate", "--model " + w.model + " --csv /dev/null --json /dev/null");
  EXPECT_EQ(r.exit_code, 0) << r.err;
  ASSERT_EQ(::stat("/dev/null", &st), 0);
  EXPECT_TRUE(S_ISCHR(st.st_mode));
}

TEST(SafeWriting, LongOutputNameIsAccepted) {
  Workspace w = make_workspace("long_name");
  const std::string out = w.dir + "/" + std::string(245, 'r') + ".json";  // 250 bytes
  ordex_test::RunResult r = run_app("ordex-propagate", "--model " + w.model + " --json " + out);
  EXPECT_EQ(r.exit_code, 0) << r.err;
  EXPECT_TRUE(ordex_test::file_exists(out));
}

std::vector<std::string> entries(const std::string& dir) {
  std::vector<std::string> names;
  if (DIR* d = ::opendir(dir.c_str())) {
    while (dirent* e = ::readdir(d)) {
      std::string n = e->d_name;
      if (n != "." && n != "..") names.push_back(n);
    }
    ::closedir(d);
  }
  std::sort(names.begin(), names.end());
  return names;
}

TEST(SafeWriting, SigtermLeavesNoFile) {
  Workspace w = make_workspace("sigterm_app");
  const std::string out = w.dir + "/out";
  ASSERT_EQ(::mkdir(out.c_str(), 0700), 0);
  // A run of several seconds: a stiff-ish oscillator over a long window, tight tolerance and
  // many samples. Its outputs' temporaries appear in OUT while it computes.
  const std::string slow = w.dir + "/slow.toml";
  ordex_test::write_file(slow, "[system]\nstates = [\"x\", \"v\"]\n[matrices]\nA = [[0, 1], [\"-(40 + 10*sin(t))\", 0]]\n");
  const std::string cmd = "exec " + std::string(ORDEX_BIN_DIR) + "/ordex-propagate --model " + slow +
                          " --from 0 --to 20000 --rtol 1e-12 --atol 1e-14 --samples 2000000 --csv " + out +
                          "/phi.csv --json " + out + "/phi.json 2>/dev/null";
  pid_t pid = ::fork();
  if (pid == 0) {
    ::execl("/bin/sh", "sh", "-c", cmd.c_str(), static_cast<char*>(nullptr));
    ::_exit(127);
  }
  // Wait until a temporary exists (the run is under way), then interrupt it.
  bool seen = false;
  for (int k = 0; k < 400 && !seen; ++k) {
    seen = !entries(out).empty();
    if (!seen) std::this_thread::sleep_for(std::chrono::milliseconds(50));
  }
  std::this_thread::sleep_for(std::chrono::milliseconds(300));
  ::kill(pid, SIGTERM);
  int status = 0;
  ::waitpid(pid, &status, 0);
  EXPECT_TRUE(seen) << "no temporary appeared";
  EXPECT_TRUE(WIFSIGNALED(status) && WTERMSIG(status) == SIGTERM) << "the run ended before SIGTERM";
  EXPECT_TRUE(entries(out).empty()) << entries(out).front();
}

// ---- Hard inputs: one line, exit 2, the file named ----------------------------------------

void expect_bad_input(const std::string& app, const std::string& args, const std::string& words) {
  const auto start = std::chrono::steady_clock::now();
  ordex_test::RunResult r = run_app(app, args);
  EXPECT_EQ(r.exit_code, 2) << app << " " << args << "\n" << r.err;
  EXPECT_EQ(ordex_test::line_count(r.err), 1) << r.err;
  EXPECT_NE(r.err.find(words), std::string::npos) << r.err;
  EXPECT_EQ(r.err.find("filesystem error"), std::string::npos) << r.err;
  EXPECT_LT(std::chrono::steady_clock::now() - start, std::chrono::seconds(20)) << "too slow: " << args;
}

TEST(HardInputs, DevicesFoldersAndUnusableNames) {
  Workspace w = make_workspace("hard_inputs");
  expect_bad_input("ordex-respond", "--model " + w.model + " --input /dev/zero", "/dev/zero: not a regular file");
  expect_bad_input("ordex-discretize", "--model " + w.model + " --times /dev/zero", "/dev/zero: not a regular file");
  expect_bad_input("ordex-discretize", "--model " + w.model + " --times " + w.dir, w.dir + ": is a folder");
  expect_bad_input("ordex-regulate", "--model " + w.model + " --weights /dev/zero", "/dev/zero: not a regular file");
  expect_bad_input("ordex-propagate", "--model /dev/zero", "/dev/zero: not a regular file");
  ordex_test::write_file(w.dir + "/zero_table.toml",
                         "[system]\nstates = [\"x\"]\n[table]\nfile = \"/dev/zero\"\n[matrices]\nA = [[\"-k\"]]\n");
  expect_bad_input("ordex-propagate", "--model " + w.dir + "/zero_table.toml", "/dev/zero: not a regular file");
  const std::string too_long = w.dir + "/" + std::string(300, 'y') + ".csv";
  expect_bad_input("ordex-propagate", "--model " + w.model + " --csv " + too_long, "longer than 255");
  expect_bad_input("ordex-propagate", "--model " + too_long, "File name too long");
  ASSERT_EQ(::symlink("loop2", (w.dir + "/loop1").c_str()), 0);
  ASSERT_EQ(::symlink("loop1", (w.dir + "/loop2").c_str()), 0);
  expect_bad_input("ordex-propagate", "--model " + w.dir + "/loop1", "loop1: cannot open the model file (Too many levels");
  expect_bad_input("ordex-propagate", "--model " + w.model + " --json " + w.dir + "/loop1/x.json", "loop1/x.json");
}

TEST(HardInputs, ModelNameThatIsNotUtf8) {
  Workspace w = make_workspace("latin1");
  const std::string odd = w.dir + "/plant_\xE9t\xE9.toml";  // Latin-1, not UTF-8
  ordex_test::write_file(odd, kPlant);
  ordex_test::RunResult r = run_app("ordex-propagate", "--model '" + odd + "' --json " + w.dir + "/out.json");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  nlohmann::json j = nlohmann::json::parse(read_file(w.dir + "/out.json"));
  EXPECT_NE(j["model"]["source"].get<std::string>().find("plant_\\xE9t\\xE9.toml"), std::string::npos);
}

// ---- Windows --------------------------------------------------------------------------------

TEST(Windows, InverseTimeModelRunsOnAWindowAwayFromZero) {
  Workspace w = make_workspace("inverse_t");
  const std::string m = w.dir + "/decay.toml";
  ordex_test::write_file(m, "[system]\nstates = [\"x\"]\n[matrices]\nA = [[\"-1/t\"]]\n");
  ordex_test::RunResult r = run_app("ordex-propagate", "--model " + m + " --from 1 --to 10 --json -");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  // x' = -x/t: x(t1) = x(t0) t0 / t1, so Phi(10, 1) = 0.1 (closed form).
  nlohmann::json j = nlohmann::json::parse(r.out);
  EXPECT_NEAR(j["phi"][0][0].get<double>(), 0.1, 1e-7);
  r = run_app("ordex-propagate", "--model " + m + " --from 0 --to 10");
  EXPECT_EQ(r.exit_code, 2) << r.err;
  EXPECT_NE(r.err.find("at t = 0"), std::string::npos) << r.err;
}

TEST(Windows, RespondOnATableModelUsesTheInputsSpan) {
  // The table covers [0, 2]; the input [0, 1]. Without [window] the input's span is the window
  // (ordex-respond --help), not the table's.
  Workspace w = make_workspace("respond_table");
  const std::string m = w.dir + "/tab_in.toml";
  ordex_test::write_file(m, "[system]\nstates = [\"x\"]\ninputs = [\"u\"]\n[table]\nfile = \"stiffness.csv\"\n"
                            "[matrices]\nA = [[\"-k\"]]\nB = [[1]]\n");
  const std::string in = w.dir + "/u.csv";
  ordex_test::write_file(in, "t,u\n0,1\n0.5,1\n1,1\n");
  ordex_test::RunResult r = run_app("ordex-respond", "--model " + m + " --input " + in + " --json -");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  nlohmann::json j = nlohmann::json::parse(r.out);
  EXPECT_EQ(j["t0"].get<double>(), 0.0);
  EXPECT_EQ(j["t1"].get<double>(), 1.0);
}

TEST(Windows, MillisecondInputAgainstASecondWindowIsWarned) {
  Workspace w = make_workspace("respond_ms");
  std::string csv = "t,f\n";
  for (int k = 0; k <= 200; ++k) csv += std::to_string(10 * k) + ",1\n";  // 0 .. 2000 "ms"
  const std::string in = w.dir + "/log_ms.csv";
  ordex_test::write_file(in, csv);
  // The plant's [window] is [0, 2] s: one sample of 201 inside.
  ordex_test::RunResult r = run_app("ordex-respond", "--model " + w.model + " --input " + in);
  EXPECT_EQ(r.exit_code, 0) << r.err;
  EXPECT_NE(r.err.find("log_ms.csv: only 1 of its 201 samples fall inside the window [0, 2]"), std::string::npos)
      << r.err;
}

TEST(Windows, EmptyWeightsFileIsReported) {
  Workspace w = make_workspace("empty_weights");
  const std::string empty = w.dir + "/none.toml";
  ordex_test::write_file(empty, "# nothing set yet\n");
  ordex_test::RunResult r = run_app("ordex-regulate", "--model " + w.model + " --weights " + empty + " --json -");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  nlohmann::json j = nlohmann::json::parse(r.out);
  EXPECT_NE(j.value("weights_note", "").find("sets none of Q, R, Qf, N: the defaults"), std::string::npos) << r.out;
}

}  // namespace
