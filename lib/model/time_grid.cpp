#include "model/time_grid.hpp"

namespace ordex {

std::vector<double> linspace(double a, double b, int n) {
  if (n <= 1) return {b};
  std::vector<double> t(static_cast<std::size_t>(n));
  for (int k = 0; k < n; ++k) t[static_cast<std::size_t>(k)] = a + (b - a) * static_cast<double>(k) / (n - 1);
  t.back() = b;
  return t;
}

}  // namespace ordex
