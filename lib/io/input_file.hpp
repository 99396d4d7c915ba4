#pragma once
// Reading input files with bounds: a file given as input may be anything the user typed
// (a folder, /dev/zero, a FIFO that never ends), and none of it may hang the run or exhaust
// memory. Every check names the file.
#include <cstddef>
#include <cstdio>
#include <memory>
#include <string>
#include <vector>

namespace ordex {

/// Bounds on input files. Far above any real model, table or history (a 1000-state table row
/// is about 25 MB only at 10^6 columns), far below what would exhaust memory.
struct InputLimits {
  /// Longest line of a CSV or times file, in bytes (default 16 MiB).
  std::size_t max_line_bytes = std::size_t(16) << 20;
  /// Largest CSV or times file, in bytes (default 1 GiB).
  std::size_t max_file_bytes = std::size_t(1) << 30;
  /// Largest TOML file (model, weights), in bytes (default 64 MiB).
  std::size_t max_toml_bytes = std::size_t(64) << 20;
};

/// The limits in force (one set for the whole toolkit).
const InputLimits& input_limits();

/// Checks that PATH can be read as a WHAT ("model file", "CSV file"): it exists, is not a
/// folder and not a device (/dev/zero is "not a regular file"); FIFOs and pipes (a shell's
/// <(...)) are allowed, since their reads are bounded. Throws InputError "PATH: ...".
void require_input_file(const std::string& path, const std::string& what);

/// The whole content of PATH (checked as above), at most MAX_BYTES; a UTF-8 byte-order mark at
/// the start is dropped. Throws InputError when the file is larger.
std::string read_text_file(const std::string& path, const std::string& what, std::size_t max_bytes);

/// Reads PATH line by line with the bounds of input_limits(). The line terminator (\n, and a
/// \r before it) is removed; a UTF-8 byte-order mark at the start of the file is dropped.
class LineReader {
 public:
  /// Opens PATH after require_input_file(PATH, WHAT). Throws InputError.
  LineReader(const std::string& path, const std::string& what);
  ~LineReader();
  LineReader(const LineReader&) = delete;
  LineReader& operator=(const LineReader&) = delete;

  /// The next line into LINE; false at the end of the file. Throws InputError "PATH:LINE: ..."
  /// for a line longer than max_line_bytes or a file larger than max_file_bytes, and for a NUL
  /// byte (a binary file is not text).
  bool next(std::string& line);
  /// 1-based number of the line last returned.
  int line_number() const { return line_; }
  const std::string& path() const { return path_; }

 private:
  std::string path_;
  std::FILE* file_ = nullptr;
  int line_ = 0;
  std::size_t total_ = 0;
};

}  // namespace ordex
