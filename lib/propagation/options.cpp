#include "propagation/options.hpp"

#include <cmath>

#include "io/errors.hpp"

namespace ordex {

std::string method_name(Method m) {
  switch (m) {
    case Method::Auto: return "auto";
    case Method::Magnus4: return "magnus4";
    case Method::Magnus6: return "magnus6";
    case Method::Adams: return "adams";
    case Method::Bdf: return "bdf";
    case Method::Rk8: return "rk8";
  }
  return "auto";
}

Method parse_method(const std::string& name) {
  for (Method m : {Method::Auto, Method::Magnus4, Method::Magnus6, Method::Adams, Method::Bdf, Method::Rk8})
    if (name == method_name(m)) return m;
  throw InputError("PropagationOptions::method: unknown method '" + name +
                   "' (choose auto, magnus4, magnus6, adams, bdf or rk8)");
}

void PropagationOptions::validate() const {
  const std::string field = "PropagationOptions::";
  if (!(rtol >= 1e-14 && rtol <= 1e-1))
    throw InputError(field + "rtol = " + format_number(rtol) + " is outside [1e-14, 0.1]");
  if (!(atol > 0 && std::isfinite(atol)))
    throw InputError(field + "atol = " + format_number(atol) + " must be a positive number");
  if (!(initial_step >= 0 && std::isfinite(initial_step)))
    throw InputError(field + "initial_step = " + format_number(initial_step) + " must be >= 0");
  if (!(max_step >= 0 && std::isfinite(max_step)))
    throw InputError(field + "max_step = " + format_number(max_step) + " must be >= 0");
  if (threads < 1 || threads > 64)
    throw InputError(field + "threads = " + std::to_string(threads) + " is outside [1, 64]");
  if (max_steps < 1)
    throw InputError(field + "max_steps = " + std::to_string(max_steps) + " must be at least 1");
}

}  // namespace ordex
