// The expression parser of model files: arbitrary text against t, a parameter and a define.
#include <ordex/io/errors.hpp>
#include <ordex/model/expression.hpp>

#include <string>

#include "fuzz_file.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  static double t = 0.0, k = 0.0;
  static const ordex::SymbolScope scope = [] {
    ordex::SymbolScope s;
    s.add_variable("t", &t);
    s.add_variable("k", &k);
    s.add_constant("omega", 2.0);
    s.add_unavailable("later", "'later' is defined later");
    return s;
  }();
  const std::string text(reinterpret_cast<const char*>(data), size);
  try {
    ordex::Expression e(text, scope, "fuzz: expression");
    for (double tt : {0.0, 0.5, -1.0}) {
      t = tt;
      k = 1.0 - tt;
      (void)e.eval();
    }
  } catch (const ordex::Error&) {
  }
  return 0;
}
