// NumericFlag: the one checked parser for every number given on fanfold's
// command line. A flag states its accepted range once (WholeFlag for counts,
// SecondsFlag for durations); parsing accepts exactly the plain decimal text
// std::from_chars reads to its end (no '+', no spaces, no units as in "32LB",
// no hex) inside that range, and otherwise returns a usage error naming the
// flag, what it expects and the text found. Pure functions; thread-safe.
#pragma once

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "common/base/status.h"

namespace fanfold {

// A flag whose value is a whole number in [min, max].
struct WholeFlag {
  std::string_view name;  // as messages show it, e.g. "-j/--workers"
  int64_t min = 0;        // smallest accepted value
  int64_t max = 0;        // largest accepted value
};

// A flag whose value is a number of seconds (fraction and exponent allowed:
// "0.5", "1e3"): in [min, max], or in (min, max] when above_min is set.
struct SecondsFlag {
  std::string_view name;   // as messages show it, e.g. "--progress-every"
  double min = 0;          // smallest accepted value (excluded iff above_min)
  double max = 0;          // largest accepted value
  // True: min itself is refused, and the message reads "above MIN" without
  // naming max, which then only caps absurd values (the message
  // --shard-time-limit always had).
  bool above_min = false;
};

// What flag expects, as its messages say it: "a whole number from 1 to 1024",
// "a number of seconds from 0.05 to 86400", "a number of seconds above 0".
std::string ExpectedText(const WholeFlag& flag);
std::string ExpectedText(const SecondsFlag& flag);

// Returns the value of text, or InvalidArgument
// "NAME: expected EXPECTED, found 'TEXT'" (overflow and "" included).
Result<int64_t> ParseWholeFlag(const WholeFlag& flag, std::string_view text);
Result<double> ParseSecondsFlag(const SecondsFlag& flag, std::string_view text);

// A comma-separated list of distinct whole numbers ("4,1,2"), each in
// [flag.min, flag.max]; returns them ascending. Errors:
// "NAME: expected a comma-separated list of whole numbers from MIN to MAX,
// found 'ITEM' in 'TEXT'" (without " in ..." when ITEM is all of TEXT) and
// "NAME: N is listed twice in 'TEXT'".
Result<std::vector<int64_t>> ParseWholeListFlag(const WholeFlag& flag, std::string_view text);

}  // namespace fanfold
