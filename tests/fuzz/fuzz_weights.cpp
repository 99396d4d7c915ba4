// The weights file of ordex-regulate (TOML: Q, R, Qf, N) for a plant with 2 states, 1 input.
#include <ordex/io/errors.hpp>
#include <ordex/riccati/weights.hpp>

#include "fuzz_file.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string path = ordex_fuzz::write("weights.toml", data, size);
  try {
    ordex::Weights w = ordex::load_weights(path, 2, 1);
    ordex::check_weights(w, 2, 1, {0.0, 0.5, 1.0}, 1.0);
  } catch (const ordex::Error&) {
  }
  return 0;
}
