#include "io/errors.hpp"

#include <cstdio>

namespace ordex {

std::string format_number(double x) {
  char buf[40];
  std::snprintf(buf, sizeof buf, "%.17g", x);
  return buf;
}

}  // namespace ordex
