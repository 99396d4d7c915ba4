// The input-history CSV reader (ordex-respond --input) against a fixed two-input model.
#include <ordex/model/model_file.hpp>
#include <ordex/io/errors.hpp>
#include <ordex/response/input_history.hpp>

#include "fuzz_file.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  static const auto sys = ordex::load_model(ordex_fuzz::write("plant.toml",
      "[system]\nstates = [\"x\"]\ninputs = [\"u\", \"w\"]\n[matrices]\nA = [[-1]]\nB = [[1, 2]]\n"));
  const std::string path = ordex_fuzz::write("input.csv", data, size);
  try {
    ordex::InputHistory h = ordex::read_input_history(path, *sys);
    Eigen::VectorXd u(2);
    ordex::input_at(h, ordex::Hold::Linear, h.times.front(), u);
    (void)ordex::window_fit_warning(h, 0.0, 1.0);
  } catch (const ordex::Error&) {
  }
  return 0;
}
