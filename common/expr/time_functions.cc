#include "common/expr/time_functions.h"

#include <cmath>
#include <cstring>

namespace fanfold {
namespace {

constexpr int64_t kSecondsPerDay = 86400;

bool IsLeapYear(int64_t y) { return (y % 4 == 0 && y % 100 != 0) || y % 400 == 0; }

int DaysInMonth(int64_t y, int m) {
  static constexpr int kDays[12] = {31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31};
  return m == 2 && IsLeapYear(y) ? 29 : kDays[m - 1];
}

// Floor division, since epoch seconds before 1970 are negative.
int64_t FloorDiv(int64_t a, int64_t b) { return a / b - ((a % b != 0) && ((a < 0) != (b < 0))); }

// Whole epoch seconds of t, or false iff t is outside the calendar range.
bool WholeSeconds(double t, int64_t* out) {
  if (!(t >= kMinEpochSeconds && t < kEndEpochSeconds)) return false;  // NaN fails too
  *out = static_cast<int64_t>(std::floor(t));
  return true;
}

// Reads exactly n decimal digits at text[*pos].
bool Digits(std::string_view text, size_t* pos, int n, int* out) {
  if (*pos + n > text.size()) return false;
  int v = 0;
  for (int i = 0; i < n; ++i) {
    char c = text[*pos + i];
    if (c < '0' || c > '9') return false;
    v = v * 10 + (c - '0');
  }
  *pos += n;
  *out = v;
  return true;
}

bool Expect(std::string_view text, size_t* pos, char c) {
  if (*pos >= text.size() || text[*pos] != c) return false;
  ++*pos;
  return true;
}

void Put2(char* p, int v) {
  p[0] = static_cast<char>('0' + v / 10);
  p[1] = static_cast<char>('0' + v % 10);
}

void Put4(char* p, int64_t v) {
  for (int i = 3; i >= 0; --i, v /= 10) p[i] = static_cast<char>('0' + v % 10);
}

}  // namespace

// Hinnant's days_from_civil: shifts the year to start in March so the leap
// day is the last day of the shifted year, then counts 400-year eras.
int64_t DaysFromCivil(int64_t y, int m, int d) {
  y -= m <= 2;
  const int64_t era = (y >= 0 ? y : y - 399) / 400;
  const int64_t yoe = y - era * 400;                               // [0, 399]
  const int64_t doy = (153 * (m > 2 ? m - 3 : m + 9) + 2) / 5 + d - 1;  // [0, 365]
  const int64_t doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;       // [0, 146096]
  return era * 146097 + doe - 719468;
}

CivilDate CivilFromDays(int64_t z) {
  z += 719468;
  const int64_t era = (z >= 0 ? z : z - 146096) / 146097;
  const int64_t doe = z - era * 146097;
  const int64_t yoe = (doe - doe / 1460 + doe / 36524 - doe / 146096) / 365;
  const int64_t doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
  const int64_t mp = (5 * doy + 2) / 153;
  const int d = static_cast<int>(doy - (153 * mp + 2) / 5 + 1);
  const int m = static_cast<int>(mp < 10 ? mp + 3 : mp - 9);
  return CivilDate{yoe + era * 400 + (m <= 2), m, d};
}

int IsoWeekdayFromDays(int64_t days) {
  // 1970-01-01 was a Thursday (ISO weekday 4).
  return static_cast<int>(((days % 7) + 7 + 3) % 7) + 1;
}

IsoWeek IsoWeekFromDays(int64_t days) {
  // An ISO week belongs to the year that holds its Thursday.
  const int64_t thursday = days - IsoWeekdayFromDays(days) + 4;
  const int64_t year = CivilFromDays(thursday).year;
  const int64_t week = (thursday - DaysFromCivil(year, 1, 1)) / 7 + 1;
  return IsoWeek{year, static_cast<int>(week)};
}

namespace {

// The digit at p[i]; sets *bad non-zero when p[i] is not an ASCII digit
// (the callers test *bad once, after reading every field).
inline int DigitAt(const char* p, size_t i, unsigned* bad) {
  const unsigned v = static_cast<unsigned>(static_cast<unsigned char>(p[i])) - '0';
  *bad |= v > 9 ? 1u : 0u;
  return static_cast<int>(v);
}

// The day number of the date at p[0, 10) ("YYYY-MM-DD"), or false iff it
// is not one. Timestamps of one log mostly share their date, so the last
// date seen (per thread) is remembered by its ten bytes.
bool DayOfDate(const char* p, int64_t* days) {
  struct LastDate {
    uint64_t head = 0;  // bytes 0..7, "YYYY-MM-"
    uint16_t tail = 0;  // bytes 8..9, "DD"
    int64_t days = 0;
    bool set = false;
  };
  thread_local LastDate last;
  uint64_t head;
  uint16_t tail;
  std::memcpy(&head, p, 8);
  std::memcpy(&tail, p + 8, 2);
  if (last.set && head == last.head && tail == last.tail) {
    *days = last.days;
    return true;
  }
  unsigned bad = 0;  // any byte that should be a digit and is not
  auto digit = [p, &bad](size_t i) { return DigitAt(p, i, &bad); };
  const int year = digit(0) * 1000 + digit(1) * 100 + digit(2) * 10 + digit(3);
  const int month = digit(5) * 10 + digit(6);
  const int day = digit(8) * 10 + digit(9);
  if (bad != 0 || p[4] != '-' || p[7] != '-' || year < 1 || month < 1 || month > 12 || day < 1 ||
      day > DaysInMonth(year, month))
    return false;
  *days = DaysFromCivil(year, month, day);
  last = LastDate{head, tail, *days, true};
  return true;
}

// The epoch second of the minute at p[0, 16) ("YYYY-MM-DDThh:mm", the
// separator T, t or a space), or false iff it is not one. Timestamps of
// one log come in time order, so most share the previous one's minute: the
// last minute seen (per thread) is remembered by its sixteen bytes.
bool MinuteOfText(const char* p, int64_t* seconds) {
  struct LastMinute {
    uint64_t head = 0;  // bytes 0..7, "YYYY-MM-"
    uint64_t tail = 0;  // bytes 8..15, "DDThh:mm"
    int64_t seconds = 0;
    bool set = false;
  };
  thread_local LastMinute last;
  uint64_t head, tail;
  std::memcpy(&head, p, 8);
  std::memcpy(&tail, p + 8, 8);
  if (last.set && head == last.head && tail == last.tail) {
    *seconds = last.seconds;
    return true;
  }
  unsigned bad = 0;  // any byte that should be a digit and is not
  auto digit = [p, &bad](size_t i) { return DigitAt(p, i, &bad); };
  const int hour = digit(11) * 10 + digit(12);
  const int minute = digit(14) * 10 + digit(15);
  const char sep = p[10];
  if (bad != 0 || p[13] != ':' || (sep != 'T' && sep != 't' && sep != ' ') || hour > 23 || minute > 59)
    return false;
  int64_t days;
  if (!DayOfDate(p, &days)) return false;
  *seconds = days * kSecondsPerDay + hour * 3600 + minute * 60;
  last = LastMinute{head, tail, *seconds, true};
  return true;
}

// The common shape, read at fixed positions without bounds checks per
// field: YYYY-MM-DD{T|t| }hh:mm:ss, then optionally '.' and 1 to 9
// fraction digits, then optionally Z, z or an offset +hh:mm / -hh:mm.
// Returns false when the text has another shape or a field out of range;
// ParseIsoTimestampGeneral then decides (it accepts everything this does,
// with the same result).
bool ParseIsoTimestampCommon(std::string_view text, double* epoch_seconds) {
  const size_t n = text.size();
  if (n < 19) return false;
  const char* p = text.data();
  unsigned bad = 0;  // any byte that should be a digit and is not
  auto digit = [p, &bad](size_t i) { return DigitAt(p, i, &bad); };
  const int second = digit(17) * 10 + digit(18);
  if (bad != 0 || p[16] != ':' || second > 59) return false;
  int64_t seconds;
  if (!MinuteOfText(p, &seconds)) return false;
  seconds += second;
  size_t pos = 19;
  double fraction = 0;
  if (pos < n && p[pos] == '.') {
    ++pos;
    int64_t num = 0, den = 1;
    // Milliseconds, the commonest fraction, at fixed places: three digits
    // and then no digit (so n >= 24: p[23] is inside the text).
    auto is_digit = [p](size_t i) { return p[i] >= '0' && p[i] <= '9'; };
    if (n >= 24 && is_digit(20) && is_digit(21) && is_digit(22) && !is_digit(23)) {
      num = (p[20] - '0') * 100 + (p[21] - '0') * 10 + (p[22] - '0');
      den = 1000;
      pos = 23;
    } else {
      for (; pos < n && pos < 29 && p[pos] >= '0' && p[pos] <= '9'; ++pos) {
        num = num * 10 + (p[pos] - '0');
        den *= 10;
      }
      if (den == 1 || (pos < n && p[pos] >= '0' && p[pos] <= '9')) return false;  // none, or a tenth
    }
    fraction = static_cast<double>(num) / static_cast<double>(den);
  }
  if (pos + 1 == n && (p[pos] == 'Z' || p[pos] == 'z')) {
    ++pos;
  } else if (pos + 6 == n && (p[pos] == '+' || p[pos] == '-') && p[pos + 3] == ':') {
    const int oh = digit(pos + 1) * 10 + digit(pos + 2);
    const int om = digit(pos + 4) * 10 + digit(pos + 5);
    if (bad != 0 || oh > 23 || om > 59) return false;
    const int64_t offset = oh * 3600 + om * 60;
    seconds += p[pos] == '+' ? -offset : offset;  // local = UTC + offset
    pos = n;
  }
  if (pos != n) return false;
  *epoch_seconds = static_cast<double>(seconds) + fraction;
  return true;
}

}  // namespace

bool ParseIsoTimestamp(std::string_view text, double* epoch_seconds) {
  return ParseIsoTimestampCommon(text, epoch_seconds) || ParseIsoTimestampGeneral(text, epoch_seconds);
}

bool ParseIsoTimestampGeneral(std::string_view text, double* epoch_seconds) {
  size_t pos = 0;
  int year, month, day;
  if (!Digits(text, &pos, 4, &year) || !Expect(text, &pos, '-') ||
      !Digits(text, &pos, 2, &month) || !Expect(text, &pos, '-') ||
      !Digits(text, &pos, 2, &day))
    return false;
  if (year < 1 || month < 1 || month > 12 || day < 1 || day > DaysInMonth(year, month))
    return false;
  int64_t seconds = DaysFromCivil(year, month, day) * kSecondsPerDay;
  double fraction = 0;
  if (pos < text.size()) {
    const char sep = text[pos++];
    if (sep != 'T' && sep != 't' && sep != ' ') return false;
    int hour, minute, second = 0;
    if (!Digits(text, &pos, 2, &hour) || !Expect(text, &pos, ':') ||
        !Digits(text, &pos, 2, &minute))
      return false;
    if (pos < text.size() && text[pos] == ':') {
      ++pos;
      if (!Digits(text, &pos, 2, &second)) return false;
      if (pos < text.size() && (text[pos] == '.' || text[pos] == ',')) {
        ++pos;
        const size_t first = pos;
        int64_t num = 0, den = 1;
        for (; pos < text.size() && text[pos] >= '0' && text[pos] <= '9'; ++pos) {
          if (pos - first < 9) {
            num = num * 10 + (text[pos] - '0');
            den *= 10;
          }
        }
        if (pos == first) return false;
        fraction = static_cast<double>(num) / static_cast<double>(den);
      }
    }
    if (hour > 23 || minute > 59 || second > 59) return false;
    seconds += hour * 3600 + minute * 60 + second;
    if (pos < text.size()) {
      const char z = text[pos];
      if (z == 'Z' || z == 'z') {
        ++pos;
      } else if (z == '+' || z == '-') {
        ++pos;
        // ±hh, ±hhmm or ±hh:mm, as Python's datetime.fromisoformat (3.11)
        // reads them.
        int oh, om = 0;
        if (!Digits(text, &pos, 2, &oh)) return false;
        if (pos < text.size() && text[pos] == ':') ++pos;
        if ((pos < text.size() || text[pos - 1] == ':') && !Digits(text, &pos, 2, &om)) return false;
        if (oh > 23 || om > 59) return false;
        const int64_t offset = oh * 3600 + om * 60;
        seconds += z == '+' ? -offset : offset;  // local = UTC + offset
      } else {
        return false;
      }
    }
  }
  if (pos != text.size()) return false;
  *epoch_seconds = static_cast<double>(seconds) + fraction;
  return true;
}

bool ParseTimeUnit(std::string_view name, TimeUnit* unit) {
  if (name == "minute") *unit = TimeUnit::kMinute;
  else if (name == "hour") *unit = TimeUnit::kHour;
  else if (name == "day") *unit = TimeUnit::kDay;
  else if (name == "week") *unit = TimeUnit::kWeek;
  else if (name == "month") *unit = TimeUnit::kMonth;
  else return false;
  return true;
}

size_t FormatTimeBucket(double t, TimeUnit unit, char* out) {
  int64_t s;
  if (!WholeSeconds(t, &s)) return 0;
  const int64_t days = FloorDiv(s, kSecondsPerDay);
  const int64_t in_day = s - days * kSecondsPerDay;
  if (unit == TimeUnit::kWeek) {
    const IsoWeek w = IsoWeekFromDays(days);
    // The ISO year of 0001-01-01 (a Monday) is 1 and of 9999-12-31 is 9999,
    // so four digits always suffice.
    Put4(out, w.year);
    out[4] = '-';
    out[5] = 'W';
    Put2(out + 6, w.week);
    return 8;
  }
  const CivilDate c = CivilFromDays(days);
  Put4(out, c.year);
  out[4] = '-';
  Put2(out + 5, c.month);
  if (unit == TimeUnit::kMonth) return 7;
  out[7] = '-';
  Put2(out + 8, c.day);
  if (unit == TimeUnit::kDay) return 10;
  out[10] = 'T';
  Put2(out + 11, static_cast<int>(in_day / 3600));
  if (unit == TimeUnit::kHour) return 13;
  out[13] = ':';
  Put2(out + 14, static_cast<int>(in_day % 3600 / 60));
  return 16;
}

int ClockHour(double t, const TimeZone& zone) {
  int64_t s;
  if (!WholeSeconds(t, &s)) return -1;
  if (zone.is_utc()) return ClockHourUtc(t);
  s = zone.Local(s);
  if (!WholeSeconds(static_cast<double>(s), &s)) return -1;
  return static_cast<int>((s - FloorDiv(s, kSecondsPerDay) * kSecondsPerDay) / 3600);
}

int IsoWeekday(double t, const TimeZone& zone) {
  int64_t s;
  if (!WholeSeconds(t, &s)) return -1;
  s = zone.Local(s);
  if (!WholeSeconds(static_cast<double>(s), &s)) return -1;
  return IsoWeekdayFromDays(FloorDiv(s, kSecondsPerDay));
}

}  // namespace fanfold
