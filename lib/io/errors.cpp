#include "io/errors.hpp"

#include <cstdio>

namespace ordex {

std::string format_number(double x) {
  char buf[40];
  std::snprintf(buf, sizeof buf, "%.17g", x);
  return buf;
}

std::string quote_clipped(const std::string& text, std::size_t max) {
  if (text.size() <= max) return "'" + text + "'";
  std::size_t cut = max > 3 ? max - 3 : max;
  // Do not cut a UTF-8 sequence in half.
  while (cut > 0 && (static_cast<unsigned char>(text[cut]) & 0xC0) == 0x80) --cut;
  return "'" + text.substr(0, cut) + "...' (" + std::to_string(text.size()) + " characters)";
}

}  // namespace ordex
