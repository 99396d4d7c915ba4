#pragma once
// What every fuzz target shares: the readers under test take file paths, so each input is
// written to a file in a private folder first. Only ordex::Error (a clear InputError or
// NumericalError) is an acceptable outcome besides success; any other exception escapes and
// libFuzzer reports it as a crash, like a sanitizer finding.
#include <cstddef>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <string>
#include <unistd.h>

namespace ordex_fuzz {

/// A folder of this process (created once).
inline const std::string& folder() {
  static const std::string dir = [] {
    const char* base = std::getenv("TMPDIR");
    std::string tmpl = std::string(base && *base ? base : "/tmp") + "/ordex-fuzz-XXXXXX";
    if (!::mkdtemp(tmpl.data())) std::abort();
    return tmpl;
  }();
  return dir;
}

/// Writes SIZE bytes of DATA to FOLDER/NAME and returns the path.
inline std::string write(const std::string& name, const std::uint8_t* data, std::size_t size) {
  const std::string path = folder() + "/" + name;
  std::FILE* f = std::fopen(path.c_str(), "wb");
  if (!f) std::abort();
  if (size > 0 && std::fwrite(data, 1, size, f) != size) std::abort();
  std::fclose(f);
  return path;
}

inline std::string write(const std::string& name, const std::string& text) {
  return write(name, reinterpret_cast<const std::uint8_t*>(text.data()), text.size());
}

}  // namespace ordex_fuzz
