// Time functions: ISO 8601 timestamp parsing and UTC calendar bucketing on
// epoch seconds (proleptic Gregorian calendar, years 0001..9999, no leap
// seconds). Used by the expression language and by anything else that needs
// a timestamp as a number or a bucket label. Pure functions; thread-safe.
#pragma once

#include <cmath>
#include <cstddef>
#include <cstdint>
#include <string_view>

#include "common/expr/time_zone.h"

namespace fanfold {

// Epoch seconds of 0001-01-01T00:00:00Z and 10000-01-01T00:00:00Z: the range
// in which calendar functions answer.
inline constexpr double kMinEpochSeconds = -62135596800.0;
inline constexpr double kEndEpochSeconds = 253402300800.0;

// Days since 1970-01-01 of a civil date. REQUIRES: 1 <= m <= 12, 1 <= d <= 31.
int64_t DaysFromCivil(int64_t y, int m, int d);

struct CivilDate {
  int64_t year;
  int month;  // 1..12
  int day;    // 1..31
};
CivilDate CivilFromDays(int64_t days);

// ISO 8601 week date: the week-numbering year and week 1..53.
struct IsoWeek {
  int64_t year;
  int week;
};
IsoWeek IsoWeekFromDays(int64_t days);

// ISO weekday of a day number: 1 = Monday ... 7 = Sunday.
int IsoWeekdayFromDays(int64_t days);

// Parses one of
//   YYYY-MM-DD
//   YYYY-MM-DD{T| }hh:mm[:ss[{.|,}fraction]][Z|±hh:mm|±hhmm|±hh]
// (no offset means UTC; 't' and 'z' are accepted as RFC 3339 allows) into
// epoch seconds. Fields are range-checked (month length and leap years
// included; hour 24 and second 60 are rejected). Fraction digits beyond the
// ninth are read but ignored. Returns true iff the whole text matched.
// The common RFC 3339 shape (YYYY-MM-DDThh:mm:ss, up to nine fraction
// digits after '.', then Z, +hh:mm, -hh:mm or nothing) takes a fast path
// that reads fixed positions and remembers (per thread) the last minute's
// epoch second and the last date's day number; every other text goes to
// ParseIsoTimestampGeneral, which gives
// the same answer for all texts (tests/expr/time_functions_test.cc checks
// the two against each other on mutated timestamps).
bool ParseIsoTimestamp(std::string_view text, double* epoch_seconds);
// The general parser: the reference for the fast path.
bool ParseIsoTimestampGeneral(std::string_view text, double* epoch_seconds);

enum class TimeUnit : uint8_t { kMinute, kHour, kDay, kWeek, kMonth };

// Returns true iff `name` is one of "minute", "hour", "day", "week", "month".
bool ParseTimeUnit(std::string_view name, TimeUnit* unit);

// Longest label FormatTimeBucket writes ("9999-12-31T23:59").
inline constexpr size_t kTimeLabelMax = 16;

// Writes the UTC label of the `unit` containing epoch second `t` into out
// (at least kTimeLabelMax bytes): minute "2026-03-05T14:07", hour
// "2026-03-05T14", day "2026-03-05", week "2026-W10" (ISO week-numbering
// year), month "2026-03". Labels of one unit sort chronologically as text.
// Returns the label's length, or 0 iff t is NaN or outside
// [kMinEpochSeconds, kEndEpochSeconds).
size_t FormatTimeBucket(double t, TimeUnit unit, char* out);

// Hour 0..23 / ISO weekday 1..7 of epoch second t on the clock of `zone`
// (UTC by default); -1 iff t or its local time is NaN or outside
// [kMinEpochSeconds, kEndEpochSeconds).
int ClockHour(double t, const TimeZone& zone = TimeZone());
// ClockHour(t) on the UTC clock, inline (it runs once per record).
inline int ClockHourUtc(double t) {
  if (!(t >= kMinEpochSeconds && t < kEndEpochSeconds)) return -1;  // NaN fails too
  // floor(t) as an integer without a libm call: truncation, one less for a
  // negative non-integer (exact: |t| < 2^63 here).
  int64_t whole = static_cast<int64_t>(t);
  whole -= static_cast<double>(whole) > t ? 1 : 0;
  const int64_t in_day = whole % 86400;
  return static_cast<int>((in_day < 0 ? in_day + 86400 : in_day) / 3600);
}
int IsoWeekday(double t, const TimeZone& zone = TimeZone());

}  // namespace fanfold
