// Tests for ScratchArena (common/base/scratch_arena.h): copies of every
// length up to past a block, each byte equal to its source (std::string
// comparison is the reference) and untouched by later copies until Reset;
// the short-string paths (4..7, 8..16, 17..32 bytes) among them.
#include "common/base/scratch_arena.h"

#include <doctest/doctest.h>

#include <string>
#include <string_view>
#include <vector>

namespace fanfold {

TEST_CASE("ScratchArena::Copy keeps every byte of strings of every length") {
  ScratchArena arena;
  for (int round = 0; round < 2; ++round) {  // the second round reuses the blocks
    std::vector<std::string> sources;
    std::vector<std::string_view> copies;
    for (size_t n = 0; n <= 200; ++n) {
      std::string s;
      for (size_t k = 0; k < n; ++k) s += static_cast<char>('a' + (k * 7 + n) % 26);
      sources.push_back(s);
    }
    sources.push_back(std::string(ScratchArena::kBlockSize + 3, 'z'));  // an allocation of its own
    for (const std::string& s : sources) copies.push_back(arena.Copy(s));
    for (size_t i = 0; i < sources.size(); ++i) {
      CAPTURE(i);
      CHECK(copies[i].size() == sources[i].size());
      CHECK(std::string(copies[i]) == sources[i]);
      if (!sources[i].empty()) CHECK(copies[i].data() != sources[i].data());
    }
    arena.Reset();
  }
}

}  // namespace fanfold
