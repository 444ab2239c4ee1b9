#include "common/base/nearest_names.h"

#include <algorithm>
#include <cctype>

namespace fanfold {
namespace {

char Lower(char c) { return static_cast<char>(std::tolower(static_cast<unsigned char>(c))); }

bool StartsWithIgnoringCase(std::string_view s, std::string_view prefix) {
  if (prefix.size() > s.size()) return false;
  for (size_t i = 0; i < prefix.size(); ++i) {
    if (Lower(s[i]) != Lower(prefix[i])) return false;
  }
  return true;
}

std::string Plain(std::string_view s) { return std::string(s); }

}  // namespace

size_t EditDistance(std::string_view a, std::string_view b) {
  // Three rows of the optimal string alignment table (Damerau 1964's adjacent
  // transposition added to Levenshtein 1966's table), O(|a|·|b|) time.
  std::vector<size_t> before(b.size() + 1), prev(b.size() + 1), cur(b.size() + 1);
  for (size_t j = 0; j <= b.size(); ++j) prev[j] = j;
  for (size_t i = 1; i <= a.size(); ++i) {
    cur[0] = i;
    for (size_t j = 1; j <= b.size(); ++j) {
      const size_t cost = Lower(a[i - 1]) == Lower(b[j - 1]) ? 0 : 1;
      cur[j] = std::min({prev[j] + 1, cur[j - 1] + 1, prev[j - 1] + cost});
      if (i > 1 && j > 1 && Lower(a[i - 1]) == Lower(b[j - 2]) &&
          Lower(a[i - 2]) == Lower(b[j - 1])) {
        cur[j] = std::min(cur[j], before[j - 2] + 1);
      }
    }
    before.swap(prev);
    prev.swap(cur);
  }
  return prev[b.size()];
}

std::vector<std::string> NearestNames(std::string_view wanted,
                                      const std::vector<std::string>& candidates,
                                      size_t limit) {
  const size_t bound = std::max<size_t>(1, std::min<size_t>(3, wanted.size() / 3));
  struct Scored {
    size_t distance;
    size_t order;
  };
  std::vector<Scored> close;
  for (size_t k = 0; k < candidates.size(); ++k) {
    const std::string& c = candidates[k];
    if (c == wanted) continue;
    size_t d = EditDistance(wanted, c);
    const bool prefix = std::min(c.size(), wanted.size()) >= 3 &&
                        (StartsWithIgnoringCase(c, wanted) || StartsWithIgnoringCase(wanted, c));
    if (d > bound && !prefix) continue;
    bool seen = false;
    for (const Scored& s : close) seen = seen || candidates[s.order] == c;
    if (!seen) close.push_back({d, k});
  }
  std::stable_sort(close.begin(), close.end(),
                   [](const Scored& x, const Scored& y) { return x.distance < y.distance; });
  std::vector<std::string> out;
  for (const Scored& s : close) {
    if (out.size() == limit) break;
    out.push_back(candidates[s.order]);
  }
  return out;
}

std::string DidYouMean(std::string_view wanted, const std::vector<std::string>& candidates,
                       std::string (*quote)(std::string_view)) {
  if (quote == nullptr) quote = Plain;
  const std::vector<std::string> near = NearestNames(wanted, candidates);
  if (near.empty()) return "";
  std::string text = " (did you mean ";
  for (size_t i = 0; i < near.size(); ++i) {
    if (i > 0) text += i + 1 == near.size() ? " or " : ", ";
    text += quote(near[i]);
  }
  return text + "?)";
}

}  // namespace fanfold
