// merger_test_util: MergerText, a merger's finished first reduction as one
// comparable string (every cell's number, floats marked), for tests that
// compare merges made in different ways. Test-only; REQUIRES what Merger::Finish requires.
#pragma once

#include <doctest/doctest.h>

#include <string>

#include "coordinator/run/merger.h"

namespace fanfold {

inline std::string MergerText(Merger& merger) {
  Result<OutputTable> t = merger.Finish(0);
  REQUIRE(t.ok());
  std::string text;
  for (const auto& row : t->rows)
    for (const Cell& c : row) text += std::to_string(c.number) + (c.kind == Cell::Kind::kFloat ? "f " : " ");
  return text;
}

}  // namespace fanfold
