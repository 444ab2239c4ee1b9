// TimeBucket: how period_start() and span_start() cut time into labelled
// buckets — a unit with a count ("15 minutes", "3 months"), an alignment
// (local calendar or fixed lengths from the epoch) and a time zone. Built once
// at compile time, then immutable; Label() is thread-safe.
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>

#include "common/expr/time_functions.h"
#include "common/expr/time_zone.h"

namespace fanfold {

// Longest label Label() writes ("9999-12-31T23:59+05:30:15" would be 25).
inline constexpr size_t kBucketLabelMax = 32;

struct TimeBucket {
  TimeUnit unit = TimeUnit::kDay;
  uint32_t count = 1;
  // false (period_start): buckets follow the local calendar, N minutes/hours
  // counted from each local midnight, N days from 1970-01-01 (local), N
  // months from January. true (span_start): fixed lengths of N
  // minutes/hours/days counted from 1970-01-01T00:00:00Z.
  bool from_epoch = false;
  TimeZone zone;  // UTC by default

  // Why a unit text was refused: the part found and what was expected, for
  // "column N: <found>; expected <expected>". found is empty iff the unit
  // name itself is unknown (the caller words that with a did-you-mean).
  struct UnitError {
    std::string found;
    std::string expected;
  };

  // Reads "[count ]unit[s]" — "hour", "15 minutes", "2 days", "3 months" —
  // into unit and count. Returns false and fills *error iff the text is not
  // a unit this alignment allows (span_start: minutes, hours, days).
  bool ParseUnit(std::string_view text, UnitError* error);

  // Writes the label of the bucket holding epoch second t into out (at least
  // kBucketLabelMax bytes); returns its length, or 0 iff t (or its local
  // time) is NaN or outside [kMinEpochSeconds, kEndEpochSeconds). Labels:
  //   UTC, as FormatTimeBucket writes them ("2026-03-05T14:15", "2026-03-05T12",
  //   "2026-03-05", "2026-W10", "2026-03");
  //   in a zone, day/week/month labels name the local date; minute and hour
  //   labels are the bucket's first instant as local ISO 8601 time with its
  //   UTC offset ("2026-10-25T02:00+01:00"), so a repeated hour stays apart.
  size_t Label(double t, char* out) const;

  // Epoch second of the first instant of the bucket holding epoch second s
  // (minute and hour units), and that instant's UTC offset. In the local
  // calendar a bucket starts when the zone's clock shows the start of a slot
  // (N minutes/hours from local midnight), or, when the clock jumps into the
  // middle of a slot (spring forward), at the jump. So a repeated hour (fall
  // back) is two hour buckets, while a 2-hour slot holding the jump back is
  // one bucket of three hours.
  int64_t Start(int64_t s, int32_t* offset) const;
};

}  // namespace fanfold
