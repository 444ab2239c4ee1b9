// Nearest-name suggestions for misspelt keys, functions, measures, options and
// field names: "did you mean ...?" text built from the names that do exist.
// Distance is the optimal string alignment distance (Damerau-Levenshtein with
// adjacent transpositions), on bytes, case-insensitively. Pure; thread-safe.
#pragma once

#include <cstddef>
#include <string>
#include <string_view>
#include <vector>

namespace fanfold {

// Edits (insert, delete, substitute, swap two adjacent bytes) that turn a into
// b, ignoring ASCII case.
size_t EditDistance(std::string_view a, std::string_view b);

// The candidates close enough to `wanted` to be a likely misspelling of it,
// nearest first (ties in the candidates' order), at most `limit` of them.
// Close enough: distance ≤ max(1, min(3, length of wanted / 3)), or one is a
// prefix of the other (ignoring case) when the shorter has ≥ 3 bytes.
std::vector<std::string> NearestNames(std::string_view wanted,
                                      const std::vector<std::string>& candidates,
                                      size_t limit = 3);

// " (did you mean X?)", " (did you mean X or Y?)", " (did you mean X, Y or Z?)",
// each name written through `quote` (e.g. to add braces or quotes); "" when no
// candidate is close enough.
std::string DidYouMean(std::string_view wanted, const std::vector<std::string>& candidates,
                       std::string (*quote)(std::string_view) = nullptr);

}  // namespace fanfold
