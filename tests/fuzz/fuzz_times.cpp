// The times file of ordex-discretize --times (one time a line).
#include <ordex/io/errors.hpp>
#include <ordex/response/discretize.hpp>

#include "fuzz_file.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string path = ordex_fuzz::write("times.txt", data, size);
  try {
    (void)ordex::read_time_grid(path);
  } catch (const ordex::Error&) {
  }
  return 0;
}
