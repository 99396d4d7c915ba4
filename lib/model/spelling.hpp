#pragma once
// "Did you mean" hints for misspelled keys and symbols in model files.
#include <string>
#include <vector>

namespace ordex {

/// The candidate closest to WORD by edit distance (insertions, deletions, substitutions,
/// adjacent swaps), if it is near enough to be a plausible typo (at most 1 edit for short
/// words, 2 for longer ones); empty otherwise.
std::string closest_spelling(const std::string& word, const std::vector<std::string>& candidates);

/// "; did you mean 'X'?" for the closest candidate, or "" when none is close.
std::string did_you_mean(const std::string& word, const std::vector<std::string>& candidates);

}  // namespace ordex
