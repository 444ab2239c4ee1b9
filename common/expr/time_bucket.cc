#include "common/expr/time_bucket.h"

#include <charconv>
#include <cmath>

namespace fanfold {
namespace {

constexpr int64_t kSecondsPerDay = 86400;

int64_t FloorDiv(int64_t a, int64_t b) { return a / b - ((a % b != 0) && ((a < 0) != (b < 0))); }

bool InRange(int64_t s) { return s >= kMinEpochSeconds && s < kEndEpochSeconds; }

int64_t UnitSeconds(TimeUnit unit) {
  switch (unit) {
    case TimeUnit::kMinute: return 60;
    case TimeUnit::kHour: return 3600;
    default: return kSecondsPerDay;
  }
}

// The largest count a unit takes: period_start's minute and hour slots fit
// in a day; span_start's spans and day slots up to about 100 years.
uint32_t MaxCount(TimeUnit unit, bool from_epoch) {
  if (unit == TimeUnit::kWeek) return 1;
  if (unit == TimeUnit::kMonth) return 12;
  if (from_epoch || unit == TimeUnit::kDay) return 36525 * kSecondsPerDay / UnitSeconds(unit);
  return kSecondsPerDay / UnitSeconds(unit);
}

// "+05:30", "-04:00"; seconds only when the offset has them (local mean
// times before standard time), as Python's datetime.isoformat writes them.
size_t PutOffset(int32_t offset, char* out) {
  const char sign = offset < 0 ? '-' : '+';
  const int32_t a = offset < 0 ? -offset : offset;
  size_t n = 0;
  out[n++] = sign;
  auto two = [&](int v) {
    out[n++] = static_cast<char>('0' + v / 10);
    out[n++] = static_cast<char>('0' + v % 10);
  };
  two(a / 3600);
  out[n++] = ':';
  two(a % 3600 / 60);
  if (a % 60 != 0) {
    out[n++] = ':';
    two(a % 60);
  }
  return n;
}

}  // namespace

bool TimeBucket::ParseUnit(std::string_view text, UnitError* error) {
  std::string_view name = text;
  uint32_t n = 1;
  bool counted = false;
  if (!text.empty() && text[0] >= '0' && text[0] <= '9') {
    const auto r = std::from_chars(text.data(), text.data() + text.size(), n);
    const size_t used = static_cast<size_t>(r.ptr - text.data());
    counted = true;
    if (r.ec == std::errc::result_out_of_range) n = 0;  // refused below as a count
    else if (used >= text.size() || text[used] != ' ') name = {};  // refused below as a unit
    else name = text.substr(used + 1);
  }
  if (name.size() > 1 && name.back() == 's') {
    const std::string_view singular = name.substr(0, name.size() - 1);
    TimeUnit u;
    if (ParseTimeUnit(singular, &u)) name = singular;
  }
  if (!ParseTimeUnit(name, &unit)) {
    *error = {};
    if (counted) {
      error->found = "unit '" + std::string(text) + "'";
      error->expected = "a count and one of 'minutes', 'hours', 'days'" +
                        std::string(from_epoch ? "" : ", 'months'") + ", e.g. '15 minutes'";
    }
    return false;
  }
  if (from_epoch && (unit == TimeUnit::kWeek || unit == TimeUnit::kMonth)) {
    error->found = "unit '" + std::string(text) + "' in span_start()";
    error->expected =
        "minutes, hours or days, e.g. '90 minutes' (span_start() cuts fixed lengths; "
        "period_start() follows the calendar)";
    return false;
  }
  const uint32_t max = MaxCount(unit, from_epoch);
  if (n < 1 || n > max) {
    error->found = "count in '" + std::string(text) + "'";
    error->expected = max == 1 ? std::string("no count with 'week'")
                               : "a whole number from 1 to " + std::to_string(max);
    return false;
  }
  count = n;
  return true;
}

int64_t TimeBucket::Start(int64_t s, int32_t* offset) const {
  const int64_t width = count * UnitSeconds(unit);
  if (from_epoch) {
    const int64_t b = FloorDiv(s, width) * width;
    *offset = zone.SpanAt(b).offset;
    return b;
  }
  // The slot of a local time: N-unit steps from its local midnight.
  auto slot = [width](int64_t local) {
    const int64_t day = FloorDiv(local, kSecondsPerDay) * kSecondsPerDay;
    return day + (local - day) / width * width;
  };
  TimeZone::Span span = zone.SpanAt(s);
  const int64_t wanted = slot(s + span.offset);
  // Walk back over transitions while the clock stays in the slot; real
  // slots hold at most a few (a day slot: two), bounded here all the same.
  for (int hops = 0; hops < 64; ++hops) {
    const int64_t at = wanted - span.offset;
    if (at >= span.begin) {
      *offset = span.offset;
      return at;  // the clock read the slot's first second within this span
    }
    const TimeZone::Span before = zone.SpanAt(span.begin - 1);
    if (slot(span.begin - 1 + before.offset) != wanted) break;  // entered the slot at the transition
    span = before;
  }
  *offset = span.offset;
  return span.begin;
}

size_t TimeBucket::Label(double t, char* out) const {
  if (!(t >= kMinEpochSeconds && t < kEndEpochSeconds)) return 0;  // NaN fails too
  // The plain UTC units: no slot arithmetic.
  if (zone.is_utc() && count == 1 && !from_epoch) return FormatTimeBucket(t, unit, out);
  const int64_t s = static_cast<int64_t>(std::floor(t));
  if (unit == TimeUnit::kMinute || unit == TimeUnit::kHour || from_epoch) {
    int32_t offset;
    const int64_t b = Start(s, &offset);
    if (!InRange(b + offset)) return 0;
    // UTC: FormatTimeBucket's labels (spans of days from the epoch start at
    // UTC midnight, so a date names them).
    if (zone.is_utc()) return FormatTimeBucket(static_cast<double>(b), unit, out);
    const size_t n = FormatTimeBucket(static_cast<double>(b + offset), TimeUnit::kMinute, out);
    return n + PutOffset(offset, out + n);
  }
  const int64_t local = zone.Local(s);
  if (!InRange(local)) return 0;
  int64_t days = FloorDiv(local, kSecondsPerDay);
  if (unit == TimeUnit::kDay) {
    days = FloorDiv(days, count) * count;
  } else if (unit == TimeUnit::kMonth && count > 1) {
    const CivilDate c = CivilFromDays(days);
    days = DaysFromCivil(c.year, (c.month - 1) / static_cast<int>(count) * static_cast<int>(count) + 1, 1);
  }
  if (!InRange(days * kSecondsPerDay)) return 0;
  return FormatTimeBucket(static_cast<double>(days * kSecondsPerDay), unit, out);
}

}  // namespace fanfold
