// Tests for coordinator/cli/numeric_flag: the one checked parser of numeric
// flags. Accepted texts are those std::from_chars reads to the end
// (ISO C++ [charconv.from.chars]); expected values are Python's int() and
// float() of the same text, written beside each check.
#include "coordinator/cli/numeric_flag.h"

#include <doctest/doctest.h>

#include <cstdint>
#include <limits>
#include <string>
#include <vector>

namespace fanfold {
namespace {

constexpr WholeFlag kWorkers{.name = "-j/--workers", .min = 1, .max = 1024};
constexpr SecondsFlag kEvery{.name = "--progress-every", .min = 0.05, .max = 86400};
constexpr SecondsFlag kLimit{.name = "--shard-time-limit", .min = 0, .max = 1e6, .above_min = true};

// The usage message for text, or "" when it was accepted.
std::string WholeError(const WholeFlag& flag, const std::string& text) {
  Result<int64_t> r = ParseWholeFlag(flag, text);
  return r.ok() ? "" : r.status().message();
}

std::string SecondsError(const SecondsFlag& flag, const std::string& text) {
  Result<double> r = ParseSecondsFlag(flag, text);
  return r.ok() ? "" : r.status().message();
}

std::string ListError(const std::string& text) {
  Result<std::vector<int64_t>> r = ParseWholeListFlag({.name = "--workers", .min = 1, .max = 1024}, text);
  return r.ok() ? "" : r.status().message();
}

TEST_CASE("whole flags: accepted texts give Python's int() of the text") {
  // Intent: the range ends are inside, and leading zeros read as decimal (Python int("00003") == 3).
  CHECK(*ParseWholeFlag(kWorkers, "1") == 1);
  CHECK(*ParseWholeFlag(kWorkers, "1024") == 1024);
  CHECK(*ParseWholeFlag(kWorkers, "00003") == 3);
  CHECK(*ParseWholeFlag(kWorkers, "17") == 17);
}

TEST_CASE("whole flags: garbage, out of range and overflow are refused with the flag, the range and the text") {
  // Intent: the message is the one -j always gave (tests/golden/bad_flag_j.expected), for every kind of bad text.
  CHECK(WholeError(kWorkers, "32LB") == "-j/--workers: expected a whole number from 1 to 1024, found '32LB'");
  CHECK(WholeError(kWorkers, "") == "-j/--workers: expected a whole number from 1 to 1024, found ''");
  CHECK(WholeError(kWorkers, "-1") == "-j/--workers: expected a whole number from 1 to 1024, found '-1'");
  CHECK(WholeError(kWorkers, "0") == "-j/--workers: expected a whole number from 1 to 1024, found '0'");
  CHECK(WholeError(kWorkers, "1025") == "-j/--workers: expected a whole number from 1 to 1024, found '1025'");
  for (const char* bad : {"abc", "+3", " 3", "3 ", "1.5", "1e3", "0x10", "-0", "3,4"})
    CHECK_MESSAGE(!WholeError(kWorkers, bad).empty(), bad);
  // 2**64 + 1 (Python: 18446744073709551617) overflows int64_t; refused, not wrapped to 1.
  CHECK(WholeError(kWorkers, "18446744073709551617") ==
        "-j/--workers: expected a whole number from 1 to 1024, found '18446744073709551617'");
  // 2**32 + 1 (Python: 4294967297) would wrap to 1 in 32 bits; refused.
  CHECK(!WholeError(kWorkers, "4294967297").empty());
}

TEST_CASE("whole flags: the int64 limits themselves") {
  // Intent: overflow is detected exactly at 2**63 (Python: 2**63 - 1 == 9223372036854775807).
  const WholeFlag any{.name = "--n", .min = std::numeric_limits<int64_t>::min(),
                      .max = std::numeric_limits<int64_t>::max()};
  CHECK(*ParseWholeFlag(any, "9223372036854775807") == std::numeric_limits<int64_t>::max());
  CHECK(*ParseWholeFlag(any, "-9223372036854775808") == std::numeric_limits<int64_t>::min());
  CHECK_FALSE(ParseWholeFlag(any, "9223372036854775808").ok());
  CHECK_FALSE(ParseWholeFlag(any, "-9223372036854775809").ok());
}

TEST_CASE("seconds flags: accepted texts give Python's float() of the text") {
  // Intent: fractions and exponents read to the nearest double, the same one Python's float() picks.
  CHECK(*ParseSecondsFlag(kEvery, "0.05") == 0.05);
  CHECK(*ParseSecondsFlag(kEvery, "86400") == 86400.0);
  CHECK(*ParseSecondsFlag(kEvery, "1e3") == 1000.0);  // Python float("1e3") == 1000.0
  // Python float("0.1").hex() == '0x1.999999999999ap-4'
  CHECK(*ParseSecondsFlag(kEvery, "0.1") == 0x1.999999999999ap-4);
  CHECK(*ParseSecondsFlag(kEvery, ".5") == 0.5);  // Python float(".5") == 0.5
  CHECK(*ParseSecondsFlag(kLimit, "1.5") == 1.5);
  CHECK(*ParseSecondsFlag(kLimit, "1000000") == 1e6);
}

TEST_CASE("seconds flags: garbage, out of range, NaN and overflow are refused") {
  // Intent: the messages name the flag and the accepted range; NaN and infinities never pass a range check.
  CHECK(SecondsError(kEvery, "0.04") ==
        "--progress-every: expected a number of seconds from 0.05 to 86400, found '0.04'");
  CHECK(SecondsError(kEvery, "86401") ==
        "--progress-every: expected a number of seconds from 0.05 to 86400, found '86401'");
  CHECK(SecondsError(kLimit, "0") == "--shard-time-limit: expected a number of seconds above 0, found '0'");
  CHECK(SecondsError(kLimit, "10s") == "--shard-time-limit: expected a number of seconds above 0, found '10s'");
  CHECK(!SecondsError(kLimit, "1000000.5").empty());
  // Python float("1e400") == inf and float("1e-400") == 0.0: out of double's range, refused either way.
  for (const char* bad : {"", "nan", "inf", "-inf", "-1", "+1", " 1", "1 ", "5s", "1e400", "1e-400", "0x10", "1,5"})
    CHECK_MESSAGE(!SecondsError(kEvery, bad).empty(), bad);
}

TEST_CASE("expected texts") {
  // Intent: the range is written with the shortest digits of its ends.
  CHECK(ExpectedText(kWorkers) == "a whole number from 1 to 1024");
  CHECK(ExpectedText(kEvery) == "a number of seconds from 0.05 to 86400");
  CHECK(ExpectedText(kLimit) == "a number of seconds above 0");
}

TEST_CASE("whole lists (scale --workers)") {
  // Intent: the items come back ascending; a bad item is named, and the whole text beside it when it differs.
  Result<std::vector<int64_t>> w = ParseWholeListFlag({.name = "--workers", .min = 1, .max = 1024}, "4,1,2");
  REQUIRE(w.ok());
  CHECK(*w == std::vector<int64_t>{1, 2, 4});
  CHECK(ListError("1,zero") ==
        "--workers: expected a comma-separated list of whole numbers from 1 to 1024, found 'zero' in '1,zero'");
  CHECK(ListError("3x") == "--workers: expected a comma-separated list of whole numbers from 1 to 1024, found '3x'");
  CHECK(ListError("") == "--workers: expected a comma-separated list of whole numbers from 1 to 1024, found ''");
  CHECK(ListError("0").find("found '0'") != std::string::npos);
  CHECK(ListError("1,1025").find("found '1025' in '1,1025'") != std::string::npos);
  CHECK(ListError("1,,2").find("found '' in '1,,2'") != std::string::npos);
  CHECK(ListError("1,2,").find("found '' in '1,2,'") != std::string::npos);
  CHECK(ListError("2,2") == "--workers: 2 is listed twice in '2,2'");
}

}  // namespace
}  // namespace fanfold
