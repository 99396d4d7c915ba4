#include "model/spelling.hpp"

#include <algorithm>

namespace ordex {
namespace {

// Optimal string alignment distance (Damerau-Levenshtein restricted to adjacent swaps).
std::size_t edit_distance(const std::string& a, const std::string& b) {
  const std::size_t n = a.size(), m = b.size();
  std::vector<std::vector<std::size_t>> d(n + 1, std::vector<std::size_t>(m + 1));
  for (std::size_t i = 0; i <= n; ++i) d[i][0] = i;
  for (std::size_t j = 0; j <= m; ++j) d[0][j] = j;
  for (std::size_t i = 1; i <= n; ++i)
    for (std::size_t j = 1; j <= m; ++j) {
      std::size_t cost = a[i - 1] == b[j - 1] ? 0 : 1;
      d[i][j] = std::min({d[i - 1][j] + 1, d[i][j - 1] + 1, d[i - 1][j - 1] + cost});
      if (i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1])
        d[i][j] = std::min(d[i][j], d[i - 2][j - 2] + 1);
    }
  return d[n][m];
}

}  // namespace

std::string closest_spelling(const std::string& word, const std::vector<std::string>& candidates) {
  const std::size_t limit = word.size() <= 3 ? 1 : 2;
  std::string best;
  std::size_t best_d = limit + 1;
  for (const std::string& c : candidates) {
    if (c == word) continue;
    // The distance is at least the difference in length: skip hopeless candidates before the
    // quadratic table (a pasted megabyte-long name must not cost a terabyte).
    const std::size_t gap = word.size() > c.size() ? word.size() - c.size() : c.size() - word.size();
    if (gap > limit) continue;
    std::size_t d = edit_distance(word, c);
    if (d < best_d) {
      best_d = d;
      best = c;
    }
  }
  return best;
}

std::string did_you_mean(const std::string& word, const std::vector<std::string>& candidates) {
  std::string c = closest_spelling(word, candidates);
  return c.empty() ? "" : "; did you mean '" + c + "'?";
}

}  // namespace ordex
