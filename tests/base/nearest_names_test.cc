#include "common/base/nearest_names.h"

#include <doctest/doctest.h>

namespace fanfold {
namespace {

// Intent: the distance agrees with the textbook values: kitten→sitting is 3
// (Levenshtein's example as given in Wikipedia's "Levenshtein distance"), and
// CA→AC is 1 with adjacent transpositions (optimal string alignment; Wikipedia,
// "Damerau–Levenshtein distance"), where plain Levenshtein gives 2.
TEST_CASE("EditDistance matches published examples") {
  CHECK(EditDistance("kitten", "sitting") == 3);
  CHECK(EditDistance("flaw", "lawn") == 2);  // Wikipedia "Levenshtein distance" example
  CHECK(EditDistance("CA", "AC") == 1);
  CHECK(EditDistance("", "abc") == 3);
  CHECK(EditDistance("abc", "") == 3);
  CHECK(EditDistance("Feeder", "feeder") == 0);  // case is ignored
}

// Intent: a one-letter slip finds the intended name; unrelated names are not offered.
TEST_CASE("NearestNames offers close names nearest first") {
  const std::vector<std::string> fields = {"/feeder", "/fee", "/ts", "/kind", "/device"};
  CHECK(NearestNames("/feedr", fields) == std::vector<std::string>{"/feeder", "/fee"});
  CHECK(NearestNames("/knid", fields) == std::vector<std::string>{"/kind"});
  CHECK(NearestNames("/zzzzzzzz", fields).empty());
  CHECK(NearestNames("/ts", fields).empty());  // an exact name is not a suggestion
}

// Intent: the sentence lists up to three names, quoted as the caller asks.
TEST_CASE("DidYouMean builds the suggestion text") {
  const std::vector<std::string> names = {"count", "sum", "mean"};
  CHECK(DidYouMean("coutn", names) == " (did you mean count?)");
  CHECK(DidYouMean("xyzzy", names) == "");
  auto braces = [](std::string_view s) { return "{" + std::string(s) + "}"; };
  CHECK(DidYouMean("/a", {"/b", "/c"}, +braces) == " (did you mean {/b} or {/c}?)");
  CHECK(DidYouMean("/a", {"/b", "/c", "/d"}, +braces) ==
        " (did you mean {/b}, {/c} or {/d}?)");
}

}  // namespace
}  // namespace fanfold
