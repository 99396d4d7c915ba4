// Output files (lib/io/output_file.hpp): complete or absent, never through a planted symlink,
// devices and FIFOs written in place, write errors reported, temporaries removed on SIGTERM,
// and outputs that would destroy an input refused.
#include <gtest/gtest.h>

#include <algorithm>
#include <chrono>
#include <functional>
#include <csignal>
#include <dirent.h>
#include <fcntl.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <thread>

#include "io/errors.hpp"
#include "io/json.hpp"
#include "io/output_file.hpp"
#include "support.hpp"

namespace {

using ordex::InputError;
using ordex::OutputFile;

std::string fresh_dir(const std::string& name) {
  std::string d = ordex_test::temp_dir() + "/" + name;
  std::string cmd = "rm -rf '" + d + "' && mkdir -p '" + d + "'";
  EXPECT_EQ(std::system(cmd.c_str()), 0);
  return d;
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

bool is_symlink(const std::string& p) {
  struct stat st {};
  return ::lstat(p.c_str(), &st) == 0 && S_ISLNK(st.st_mode);
}

TEST(OutputFile, CommitWritesTheFileAndLeavesNoTemporary) {
  const std::string dir = fresh_dir("commit");
  {
    OutputFile f(dir + "/out.csv");
    f.stream() << "t,x\n0,1\n";
    f.commit();
  }
  EXPECT_EQ(ordex_test::read_file(dir + "/out.csv"), "t,x\n0,1\n");
  EXPECT_EQ(entries(dir), std::vector<std::string>{"out.csv"});
  // A new file gets the usual permissions (umask), not mkstemp's 0600.
  struct stat st {};
  ASSERT_EQ(::stat((dir + "/out.csv").c_str(), &st), 0);
  mode_t mask = ::umask(0);
  ::umask(mask);
  EXPECT_EQ(st.st_mode & 0777, 0666 & ~mask);
}

TEST(OutputFile, WithoutCommitNothingIsLeftAndAnOldFileIsKept) {
  const std::string dir = fresh_dir("nocommit");
  ordex_test::write_file(dir + "/out.csv", "old\n");
  {
    OutputFile f(dir + "/out.csv");
    f.stream() << "half";
  }
  EXPECT_EQ(ordex_test::read_file(dir + "/out.csv"), "old\n");
  EXPECT_EQ(entries(dir), std::vector<std::string>{"out.csv"});
}

TEST(OutputFile, TemporaryIsUnpredictableAndAPlantedSymlinkIsNotFollowed) {
  const std::string dir = fresh_dir("symlink");
  const std::string victim = dir + "/victim.txt";
  ordex_test::write_file(victim, "precious\n");
  // The old scheme's name (PATH.tmp-PID) planted as a link to the victim.
  const std::string planted = dir + "/out.csv.tmp-" + std::to_string(::getpid());
  ASSERT_EQ(::symlink(victim.c_str(), planted.c_str()), 0);
  std::string temp_a, temp_b;
  {
    OutputFile a(dir + "/out.csv");
    OutputFile b(dir + "/out.csv");
    for (const std::string& n : entries(dir))
      if (n.rfind(".ordex-", 0) == 0) (temp_a.empty() ? temp_a : temp_b) = n;
    a.stream() << "new\n";
    a.commit();
  }
  EXPECT_FALSE(temp_a.empty());
  EXPECT_FALSE(temp_b.empty());
  EXPECT_NE(temp_a, temp_b);                      // mkstemp: a fresh random name each time
  EXPECT_LT(temp_a.size(), 16u);                  // short, so long target names still fit
  EXPECT_EQ(ordex_test::read_file(victim), "precious\n");
  EXPECT_TRUE(is_symlink(planted));               // left untouched
  EXPECT_EQ(ordex_test::read_file(dir + "/out.csv"), "new\n");
}

TEST(OutputFile, LongOutputNameIsAccepted) {
  const std::string dir = fresh_dir("longname");
  const std::string name = std::string(246, 'n') + ".csv";  // 250 bytes: valid on Linux
  ordex::check_outputs({dir + "/" + name}, {});
  OutputFile f(dir + "/" + name);
  f.stream() << "ok\n";
  f.commit();
  EXPECT_EQ(ordex_test::read_file(dir + "/" + name), "ok\n");
}

TEST(OutputFile, FifoIsWrittenInPlace) {
  const std::string dir = fresh_dir("fifo");
  const std::string fifo = dir + "/pipe";
  ASSERT_EQ(::mkfifo(fifo.c_str(), 0600), 0);
  std::string received;
  std::thread reader([&] { received = ordex_test::read_file(fifo); });
  {
    OutputFile f(fifo);
    f.stream() << "through the pipe\n";
    f.commit();
  }
  reader.join();
  EXPECT_EQ(received, "through the pipe\n");
  struct stat st {};
  ASSERT_EQ(::lstat(fifo.c_str(), &st), 0);
  EXPECT_TRUE(S_ISFIFO(st.st_mode));              // still a FIFO, not a regular file
  EXPECT_EQ(entries(dir), std::vector<std::string>{"pipe"});
}

TEST(OutputFile, CharacterDeviceIsWrittenInPlace) {
  // /dev/null stands for any device: opened and written, never renamed over.
  ordex::check_outputs({"/dev/null"}, {});
  OutputFile f("/dev/null");
  f.stream() << "discarded\n";
  EXPECT_NO_THROW(f.commit());
  struct stat st {};
  ASSERT_EQ(::stat("/dev/null", &st), 0);
  EXPECT_TRUE(S_ISCHR(st.st_mode));
}

TEST(OutputFile, WriteErrorOnADeviceIsAnError) {
  struct stat st {};
  if (::stat("/dev/full", &st) != 0) GTEST_SKIP() << "no /dev/full";
  OutputFile f("/dev/full");
  f.stream() << "no room\n";
  try {
    f.commit();
    FAIL() << "a write to /dev/full was reported as done";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("/dev/full: cannot write"), std::string::npos) << e.what();
  }
}

// Runs BODY in a child whose standard output is /dev/full; returns the child's exit status.
int exit_status_with_stdout_full(const std::function<void()>& body) {
  pid_t pid = ::fork();
  if (pid == 0) {
    int fd = ::open("/dev/full", O_WRONLY);
    if (fd < 0 || ::dup2(fd, STDOUT_FILENO) < 0) ::_exit(9);
    try {
      body();
      ::_exit(0);
    } catch (const InputError&) {
      ::_exit(2);
    } catch (...) {
      ::_exit(8);
    }
  }
  int status = 0;
  ::waitpid(pid, &status, 0);
  return WIFEXITED(status) ? WEXITSTATUS(status) : -1;
}

TEST(OutputFile, WriteErrorOnStandardOutputIsAnError) {
  struct stat st {};
  if (::stat("/dev/full", &st) != 0) GTEST_SKIP() << "no /dev/full";
  EXPECT_EQ(exit_status_with_stdout_full([] { ordex::write_text_file("-", "{}\n"); }), 2);
  EXPECT_EQ(exit_status_with_stdout_full([] { ordex::write_json_file("/dev/stdout", ordex::Json::object()); }), 2);
}

TEST(OutputFile, SigtermRemovesTheTemporaries) {
  const std::string dir = fresh_dir("sigterm");
  int ready[2];
  ASSERT_EQ(::pipe(ready), 0);
  pid_t pid = ::fork();
  if (pid == 0) {
    OutputFile a(dir + "/a.csv"), b(dir + "/b.json");
    a.stream() << "partial";
    if (::write(ready[1], "x", 1) != 1) ::_exit(9);
    for (;;) ::pause();  // a long computation
  }
  char c;
  ASSERT_EQ(::read(ready[0], &c, 1), 1);
  EXPECT_EQ(entries(dir).size(), 2u);  // both temporaries exist while it runs
  ::kill(pid, SIGTERM);
  int status = 0;
  ::waitpid(pid, &status, 0);
  EXPECT_TRUE(WIFSIGNALED(status) && WTERMSIG(status) == SIGTERM);  // re-raised: killed by it
  EXPECT_TRUE(entries(dir).empty());
}

// ---- check_outputs -------------------------------------------------------------------------

std::string message_of(const std::vector<std::string>& outs, const std::vector<std::string>& ins) {
  try {
    ordex::check_outputs(outs, ins);
  } catch (const InputError& e) {
    return e.what();
  }
  return "";
}

TEST(CheckOutputs, OutputNamingAnInputIsRefused) {
  const std::string dir = fresh_dir("clobber");
  const std::string model = dir + "/m.toml";
  ordex_test::write_file(model, "[system]\n");
  EXPECT_NE(message_of({model}, {model}).find("is an input of this run"), std::string::npos);
  // The same file by another spelling, through a symlink, and by a hard link.
  ASSERT_EQ(::mkdir((dir + "/sub").c_str(), 0700), 0);
  EXPECT_NE(message_of({dir + "/sub/../m.toml"}, {model}), "");
  ASSERT_EQ(::symlink(model.c_str(), (dir + "/link.toml").c_str()), 0);
  EXPECT_NE(message_of({dir + "/link.toml"}, {model}), "");
  ASSERT_EQ(::link(model.c_str(), (dir + "/hard.toml").c_str()), 0);
  EXPECT_NE(message_of({dir + "/hard.toml"}, {model}).find("is an input of this run (" + model + ")"),
            std::string::npos);
  EXPECT_EQ(message_of({dir + "/out.json", "-"}, {model}), "");
}

TEST(CheckOutputs, TwoOutputsOneFileFolderAndStdoutTwiceAreRefused) {
  const std::string dir = fresh_dir("outs");
  EXPECT_NE(message_of({dir + "/a.csv", dir + "/./a.csv"}, {}).find("named by two outputs"), std::string::npos);
  EXPECT_NE(message_of({dir}, {}).find("is a folder"), std::string::npos);
  EXPECT_NE(message_of({"-", "/dev/stdout"}, {}).find("standard output"), std::string::npos);
  EXPECT_NE(message_of({dir + "/missing/a.csv"}, {}).find("cannot write into the folder"), std::string::npos);
  // Devices may take several outputs.
  EXPECT_EQ(message_of({"/dev/null", "/dev/null"}, {}), "");
}

TEST(CheckOutputs, UnusablePathsAreBadInputNamingTheFile) {
  const std::string dir = fresh_dir("unusable");
  const std::string too_long = dir + "/" + std::string(300, 'x') + ".csv";
  std::string m = message_of({too_long}, {});
  EXPECT_NE(m.find("longer than 255"), std::string::npos) << m;
  ASSERT_EQ(::symlink("loop_b", (dir + "/loop_a").c_str()), 0);
  ASSERT_EQ(::symlink("loop_a", (dir + "/loop_b").c_str()), 0);
  m = message_of({dir + "/loop_a/out.csv"}, {});
  EXPECT_NE(m.find(dir + "/loop_a/out.csv"), std::string::npos) << m;
  EXPECT_EQ(m.find("filesystem error"), std::string::npos) << m;
}

// ---- JSON with file names that are not UTF-8 -----------------------------------------------

TEST(Json, InvalidUtf8IsEscapedNotAnError) {
  ordex::Json j = ordex::Json::object();
  j["source"] = std::string("models/caf\xE9.toml");  // Latin-1 e-acute: not UTF-8
  j["ok"] = "\xC3\xA9t\xC3\xA9";                      // valid UTF-8 stays as it is
  j[std::string("k\xFF")] = 1;
  std::string text;
  ASSERT_NO_THROW(text = ordex::dump_json(j));
  EXPECT_NE(text.find("caf\\\\xE9.toml"), std::string::npos) << text;
  EXPECT_NE(text.find("\xC3\xA9t\xC3\xA9"), std::string::npos);
  ordex::Json back = ordex::Json::parse(text);  // valid JSON again
  EXPECT_EQ(back["source"], "models/caf\\xE9.toml");
  EXPECT_EQ(back["k\\xFF"], 1);
  // Overlong forms and surrogates are not UTF-8 either (Unicode standard, table 3-7).
  EXPECT_EQ(ordex::utf8_escaped("\xC0\xAF"), "\\xC0\\xAF");
  EXPECT_EQ(ordex::utf8_escaped("\xED\xA0\x80"), "\\xED\\xA0\\x80");
  EXPECT_EQ(ordex::utf8_escaped("\xF0\x9F\x98\x80"), "\xF0\x9F\x98\x80");
}

}  // namespace
