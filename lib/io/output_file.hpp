#pragma once
// Output files are either complete or absent (CONTRACT.md): content goes to a temporary file
// beside the target, which is renamed over the target only when commit() is called. A file that
// is destroyed without commit() removes its temporary, so an error leaves nothing behind.
#include <fstream>
#include <string>

namespace ordex {

class OutputFile {
 public:
  /// Opens PATH.tmp-PID for writing; "-" means standard output (written directly).
  /// Throws InputError naming the path when it cannot be created.
  explicit OutputFile(const std::string& path);
  ~OutputFile();
  OutputFile(const OutputFile&) = delete;
  OutputFile& operator=(const OutputFile&) = delete;

  std::ostream& stream();
  /// Flushes and renames the temporary over the target. Throws InputError on failure.
  void commit();
  const std::string& path() const { return path_; }

 private:
  std::string path_, tmp_;
  std::ofstream file_;
  bool to_stdout_ = false, committed_ = false;
};

/// Writes TEXT to PATH atomically ("-" = standard output).
void write_text_file(const std::string& path, const std::string& text);

}  // namespace ordex
