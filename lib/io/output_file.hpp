#pragma once
// Output files are either complete or absent, and never one of the run's inputs (CONTRACT.md).
//
// A regular output goes to a temporary file created beside the target with an unpredictable
// short name (mkstemp: O_CREAT|O_EXCL, so a symlink planted there is never followed), renamed
// over the target only when commit() is called. A file destroyed without commit() removes its
// temporary, and so does SIGINT or SIGTERM (an async-signal-safe handler unlinks the registered
// temporaries, then re-raises the signal). Standard output ("-", /dev/stdout), character
// devices, FIFOs and sockets are written directly: replacing them by a regular file would be
// wrong (and as root would destroy a device node).
#include <memory>
#include <ostream>
#include <string>
#include <vector>

namespace ordex {

class OutputFile {
 public:
  /// Opens the temporary for PATH (or PATH itself when it is standard output or not a regular
  /// file). Throws InputError naming the path when it cannot be created.
  explicit OutputFile(const std::string& path);
  ~OutputFile();
  OutputFile(const OutputFile&) = delete;
  OutputFile& operator=(const OutputFile&) = delete;

  /// The stream to write to (17 significant digits).
  std::ostream& stream();
  /// Flushes and renames the temporary over the target (or flushes standard output or the
  /// device). A write error, including on standard output (a full disk, /dev/full), throws
  /// InputError "PATH: cannot write (REASON)" and leaves no file.
  void commit();
  const std::string& path() const { return path_; }
  /// The temporary that commit() renames over path() (empty when written in place: a stream
  /// or device), for writers that need a file name of their own (the HDF5 library).
  const std::string& temporary_path() const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
  std::string path_;
};

/// Writes TEXT to PATH atomically ("-" = standard output).
void write_text_file(const std::string& path, const std::string& text);

/// Checks a run's output paths against each other and against its input files, before any
/// work; throws InputError (exit 2) naming the path when
///  - an output names one of INPUTS: the same file after resolving links and "..", or a hard
///    link to it (same device and inode) -- writing it would destroy the input;
///  - two outputs name the same file (they would overwrite each other);
///  - an output is an existing folder, or its folder does not exist;
///  - a path cannot be used at all (name too long, a loop of symbolic links, no permission to
///    look into a folder): the reason is named, not a raw filesystem error.
/// Empty entries are outputs not asked for; "-" is standard output (at most one output may use
/// it). Standard output and devices (/dev/null) are not compared with each other.
void check_outputs(const std::vector<std::string>& outputs, const std::vector<std::string>& inputs);

/// True for "-" and the names of the standard streams (/dev/stdout, /dev/stderr, /dev/fd/N,
/// /proc/self/fd/N): written directly, never replaced.
bool is_stream_name(const std::string& path);

}  // namespace ordex
