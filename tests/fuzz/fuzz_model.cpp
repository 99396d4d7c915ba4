// The model loader on arbitrary TOML: every input ends in a System or an ordex::Error.
#include <ordex/model/model_file.hpp>
#include <ordex/io/errors.hpp>

#include "fuzz_file.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string path = ordex_fuzz::write("model.toml", data, size);
  try {
    auto sys = ordex::load_model(path);
    // Evaluate once where the model says it lives, as every job does first.
    const double t = sys->info().window ? sys->info().window->first : 1.0;
    sys->require_defined_on(t, t + 1.0, "fuzz");
    (void)sys->A(t);
  } catch (const ordex::Error&) {
  }
  return 0;
}
