#pragma once
// Shared test helpers: run an app or a Python reference script and capture what it printed.
#include <array>
#include <cctype>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <sstream>
#include <string>
#include <sys/wait.h>
#include <unistd.h>

namespace ordex_test {

struct RunResult {
  int exit_code = -1;
  std::string out, err;
};

inline std::string temp_dir() {
  static std::string dir = [] {
    char tmpl[] = "/tmp/ordex-test-XXXXXX";
    const char* d = ::mkdtemp(tmpl);
    return std::string(d ? d : "/tmp");
  }();
  return dir;
}

inline std::string read_file(const std::string& path) {
  std::ifstream in(path);
  std::stringstream ss;
  ss << in.rdbuf();
  return ss.str();
}

inline bool file_exists(const std::string& path) { return ::access(path.c_str(), F_OK) == 0; }

inline void write_file(const std::string& path, const std::string& text) {
  std::ofstream(path) << text;
}

/// Runs COMMAND through /bin/sh with standard input from /dev/null; captures both streams.
inline RunResult run(const std::string& command) {
  static int counter = 0;
  std::string base = temp_dir() + "/run" + std::to_string(::getpid()) + "_" + std::to_string(counter++);
  std::string full = "(" + command + ") </dev/null >" + base + ".out 2>" + base + ".err";
  int status = std::system(full.c_str());
  RunResult r;
  r.exit_code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  r.out = read_file(base + ".out");
  r.err = read_file(base + ".err");
  return r;
}

/// Runs build/bin/APP with ARGS.
inline RunResult run_app(const std::string& app, const std::string& args) {
  return run(std::string(ORDEX_BIN_DIR) + "/" + app + " " + args);
}

/// Runs a Python reference script (tests/reference/NAME) with Debian's python3, which has
/// numpy and scipy; returns its standard output.
inline RunResult run_python(const std::string& script, const std::string& args = "") {
  return run(std::string(ORDEX_PYTHON) + " " + std::string(ORDEX_TESTS_DIR) + "/reference/" +
             script + " " + args);
}

inline std::string model_path(const std::string& name) {
  return std::string(ORDEX_MODELS_DIR) + "/" + name;
}

/// True for a line of the progress an app prints off a terminal once a run passes 5 s
/// ("ordex-regulate: 70% after 5 s"). Whether it appears depends on the machine's speed
/// (a sanitizer build runs 10-20x slower), so message counts leave it out.
inline bool is_progress_line(const std::string& line) {
  const auto colon = line.find(": ");
  if (colon == std::string::npos || line.compare(0, 6, "ordex-") != 0) return false;
  std::size_t i = colon + 2, digits = 0;
  while (i < line.size() && std::isdigit(static_cast<unsigned char>(line[i]))) ++i, ++digits;
  if (digits == 0 || line.compare(i, 7, "% after") != 0) return false;
  return line.compare(line.size() - 2, 2, " s") == 0;  // the line holds "% after", so size >= 7
}

/// Counts the lines of S (for "one-line error" checks), leaving out progress lines.
inline int line_count(const std::string& s) {
  int n = 0;
  std::istringstream in(s);
  for (std::string line; std::getline(in, line);) n += !is_progress_line(line);
  return n;
}

}  // namespace ordex_test
