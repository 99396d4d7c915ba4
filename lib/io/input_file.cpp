#include "io/input_file.hpp"

#include <cerrno>
#include <cstring>
#include <sys/stat.h>

#include "io/errors.hpp"

namespace ordex {
namespace {

const char kBom[] = "\xEF\xBB\xBF";

std::string mebibytes(std::size_t bytes) { return std::to_string(bytes >> 20) + " MiB"; }

std::FILE* open_checked(const std::string& path, const std::string& what) {
  require_input_file(path, what);
  std::FILE* f = std::fopen(path.c_str(), "rb");
  if (!f) throw InputError(path + ": cannot open the " + what + " (" + std::strerror(errno) + ")");
  return f;
}

}  // namespace

const InputLimits& input_limits() {
  static const InputLimits limits;
  return limits;
}

void require_input_file(const std::string& path, const std::string& what) {
  if (path.empty()) throw InputError("the " + what + " path is empty");
  struct stat st {};
  if (::stat(path.c_str(), &st) != 0) {
    if (errno == ENOENT) throw InputError(path + ": no such " + what);
    throw InputError(path + ": cannot open the " + what + " (" + std::strerror(errno) + ")");
  }
  if (S_ISDIR(st.st_mode)) throw InputError(path + ": is a folder, not a " + what);
  if (S_ISCHR(st.st_mode) || S_ISBLK(st.st_mode) || S_ISSOCK(st.st_mode))
    throw InputError(path + ": not a regular file (" +
                     (S_ISSOCK(st.st_mode) ? "a socket" : "a device") + "); give the " + what + " as a file");
}

std::string read_text_file(const std::string& path, const std::string& what, std::size_t max_bytes) {
  std::FILE* f = open_checked(path, what);
  std::string text;
  char buf[1 << 16];
  std::size_t n;
  while ((n = std::fread(buf, 1, sizeof buf, f)) > 0) {
    if (text.size() + n > max_bytes) {
      std::fclose(f);
      throw InputError(path + ": larger than " + mebibytes(max_bytes) + ", too large for a " + what);
    }
    text.append(buf, n);
  }
  const bool failed = std::ferror(f) != 0;
  std::fclose(f);
  if (failed) throw InputError(path + ": read error in the " + what);
  if (text.compare(0, 3, kBom) == 0) text.erase(0, 3);
  return text;
}

LineReader::LineReader(const std::string& path, const std::string& what)
    : path_(path), file_(open_checked(path, what)) {}

LineReader::~LineReader() {
  if (file_) std::fclose(file_);
}

bool LineReader::next(std::string& line) {
  line.clear();
  const InputLimits& lim = input_limits();
  int c = EOF;
  bool any = false;
  while ((c = getc_unlocked(file_)) != EOF) {
    any = true;
    if (++total_ > lim.max_file_bytes)
      throw InputError(path_ + ": larger than " + mebibytes(lim.max_file_bytes) + " (stopped reading at line " +
                       std::to_string(line_ + 1) + ")");
    if (c == '\n') break;
    if (c == '\0')
      throw InputError(path_ + ":" + std::to_string(line_ + 1) + ": a NUL byte: this is not a text file");
    if (line.size() >= lim.max_line_bytes)
      throw InputError(path_ + ":" + std::to_string(line_ + 1) + ": line longer than " +
                       mebibytes(lim.max_line_bytes));
    line.push_back(static_cast<char>(c));
  }
  if (std::ferror(file_)) throw InputError(path_ + ": read error after line " + std::to_string(line_));
  if (!any) return false;
  ++line_;
  if (!line.empty() && line.back() == '\r') line.pop_back();
  if (line_ == 1 && line.compare(0, 3, kBom) == 0) line.erase(0, 3);
  return true;
}

}  // namespace ordex
