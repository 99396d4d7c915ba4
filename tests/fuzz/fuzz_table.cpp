// The CSV reader of tabulated models: arbitrary bytes as the table of a fixed model.
#include <ordex/model/model_file.hpp>
#include <ordex/io/errors.hpp>

#include "fuzz_file.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  static const std::string model = ordex_fuzz::write("tabulated.toml",
      "[system]\nstates = [\"x\"]\n[table]\nfile = \"table.csv\"\ninterpolation = \"pchip\"\n"
      "outside = \"hold\"\n[matrices]\nA = [[\"-k\"]]\n");
  ordex_fuzz::write("table.csv", data, size);
  try {
    auto sys = ordex::load_model(model);
    (void)sys->A(0.5);
  } catch (const ordex::Error&) {
  }
  return 0;
}
