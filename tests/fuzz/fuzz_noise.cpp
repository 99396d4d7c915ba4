// The noise file of ordex-estimate (TOML: Qn, through or G, Rn, P0) for a plant with 2 states,
// inputs "f" and "w", outputs "p" and "v"; then its checks over a short grid.
#include <ordex/estimation/noise.hpp>
#include <ordex/io/errors.hpp>
#include <ordex/model/function_system.hpp>

#include "fuzz_file.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  static ordex::FunctionSystem sys = [] {
    ordex::FunctionSystem s({"x", "v"});
    s.set_A([](double, ordex::MatrixRef m) { m << 0, 1, -1, -0.1; });
    s.set_B({"f", "w"}, [](double, ordex::MatrixRef m) { m << 0, 0, 1, 0.5; });
    s.set_C({"p", "v"}, [](double, ordex::MatrixRef m) { m.setIdentity(); });
    return s;
  }();
  const std::string path = ordex_fuzz::write("noise.toml", data, size);
  try {
    ordex::NoiseModel n = ordex::load_noise(path, sys);
    ordex::check_noise(n, sys, {0.0, 0.5, 1.0}, true);
    ordex::NoiseTerms terms(sys, n, true);
    terms.at(0.25);
  } catch (const ordex::Error&) {
  }
  return 0;
}
