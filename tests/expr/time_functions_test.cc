// Tests for common/expr/time_functions: ISO 8601 parsing and UTC bucketing,
// checked against Python's datetime (tables embedded here, plus a random
// sweep that runs python3 at test time).
#include "common/expr/time_functions.h"

#include "tests/expr/expr_test_util.h"

#include <doctest/doctest.h>

#include <cmath>
#include <cstdio>
#include <cstring>
#include <sstream>
#include <string>
#include <vector>

namespace fanfold {
namespace {

std::string Bucket(double t, TimeUnit unit) {
  char buf[kTimeLabelMax];
  size_t n = FormatTimeBucket(t, unit, buf);
  return std::string(buf, n);
}


}  // namespace

// Intent: every accepted form parses to the epoch second Python computes.
TEST_CASE("ParseIsoTimestamp accepts the documented forms") {
  struct Case {
    const char* text;
    double epoch;
  };
  // Expected values computed with Python 3.11 datetime:
  // datetime.fromisoformat(text) (naive taken as UTC) minus 1970-01-01T00:00Z.
  const Case cases[] = {
      {"2026-03-05", 1772668800.0},
      {"2026-03-05T14:07", 1772719620.0},
      {"2026-03-05 14:07:09", 1772719629.0},
      {"2026-03-05T14:07:09Z", 1772719629.0},
      {"2026-03-05T14:07:09.250Z", 1772719629.25},
      {"2026-03-05T14:07:09.250", 1772719629.25},
      {"2026-03-05T14:07:09.2500Z", 1772719629.25},
      {"2026-03-05T14:07:09.250+01:00", 1772716029.25},
      {"2026-03-05T14:07:09.123456+01:00", 1772716029.123456},
      {"2026-03-05T14:07:09-0530", 1772739429.0},
      {"2026-03-05T14:07:09,5Z", 1772719629.5},
      {"2024-02-29T23:59:59+00:00", 1709251199.0},
      {"2000-02-29", 951782400.0},
      {"1969-12-31T23:59:59Z", -1.0},
      {"0001-01-01T00:00:00Z", -62135596800.0},
      {"9999-12-31T23:59:59Z", 253402300799.0},
      {"2026-03-05T00:30+01:00", 1772667000.0},
  };
  for (const Case& c : cases) {
    CAPTURE(c.text);
    double t = 0;
    REQUIRE(ParseIsoTimestamp(c.text, &t));
    CHECK(t == doctest::Approx(c.epoch).epsilon(1e-15));
  }
  // Fraction digits past the ninth are ignored; lowercase t and z per RFC 3339 §5.6.
  double t = 0;
  REQUIRE(ParseIsoTimestamp("2026-03-05t14:07:09.1234567891234z", &t));
  CHECK(t == doctest::Approx(1772719629.123456789).epsilon(1e-15));
}

// Intent: out-of-range fields and malformed text are rejected, not misread.
TEST_CASE("ParseIsoTimestamp rejects malformed timestamps") {
  // Python 3.11's datetime.fromisoformat rejects each of the first eleven too
  // ("day is out of range for month", "hour must be in 0..23", ...).
  const char* bad[] = {
      "2023-02-29", "1900-02-29", "2026-13-01", "2026-03-05T24:00", "2026-03-05T14:60",
      "2026-03-05T14:07:60", "2026-03-05T", "2026-3-5", "2026-03-05Z", "2026-03-05T14:07:09.",
      "0000-01-01",
      // Outside the documented subset:
      "2026-03-05T14", "2026-03-05T14:07+25:00", "2026-03-05T14:07+1", "2026-03-05T14:07:09+01:0",
      " 2026-03-05", "2026-03-05 ", "2026-03-05T14:07.5", "2026/03/05", "20260305", "", "abc",
      "2026-00-10", "2026-04-31", "2026-03-05T14:07:09.5X",
  };
  for (const char* s : bad) {
    CAPTURE(s);
    double t = 123;
    CHECK_FALSE(ParseIsoTimestamp(s, &t));
    CHECK(t == 123);  // untouched on failure
  }
}

// Intent: labels, ISO weeks and weekdays match Python at year boundaries,
// leap days and the ends of the supported range.
TEST_CASE("FormatTimeBucket, ClockHour and IsoWeekday agree with Python") {
  struct Case {
    double t;
    const char* minute;
    const char* hour;
    const char* day;
    const char* week;
    const char* month;
    int weekday;
  };
  // Computed with Python 3.11 datetime: t is 14:07:09 UTC on the day;
  // week from date.isocalendar(), weekday as date.weekday() + 1.
  const Case cases[] = {
      {1609423629, "2020-12-31T14:07", "2020-12-31T14", "2020-12-31", "2020-W53", "2020-12", 4},
      {1609682829, "2021-01-03T14:07", "2021-01-03T14", "2021-01-03", "2020-W53", "2021-01", 7},
      {1609769229, "2021-01-04T14:07", "2021-01-04T14", "2021-01-04", "2021-W01", "2021-01", 1},
      {1735481229, "2024-12-29T14:07", "2024-12-29T14", "2024-12-29", "2024-W52", "2024-12", 7},
      {1735567629, "2024-12-30T14:07", "2024-12-30T14", "2024-12-30", "2025-W01", "2024-12", 1},
      {1767276429, "2026-01-01T14:07", "2026-01-01T14", "2026-01-01", "2026-W01", "2026-01", 4},
      {1451570829, "2015-12-31T14:07", "2015-12-31T14", "2015-12-31", "2015-W53", "2015-12", 4},
      {1451830029, "2016-01-03T14:07", "2016-01-03T14", "2016-01-03", "2015-W53", "2016-01", 7},
      {1798812429, "2027-01-01T14:07", "2027-01-01T14", "2027-01-01", "2026-W53", "2027-01", 5},
      {1798985229, "2027-01-03T14:07", "2027-01-03T14", "2027-01-03", "2026-W53", "2027-01", 7},
      {1230559629, "2008-12-29T14:07", "2008-12-29T14", "2008-12-29", "2009-W01", "2008-12", 1},
      {1262527629, "2010-01-03T14:07", "2010-01-03T14", "2010-01-03", "2009-W53", "2010-01", 7},
      {1709215629, "2024-02-29T14:07", "2024-02-29T14", "2024-02-29", "2024-W09", "2024-02", 4},
      {951833229, "2000-02-29T14:07", "2000-02-29T14", "2000-02-29", "2000-W09", "2000-02", 2},
      {-2203840371, "1900-03-01T14:07", "1900-03-01T14", "1900-03-01", "1900-W09", "1900-03", 4},
      {-62135545971, "0001-01-01T14:07", "0001-01-01T14", "0001-01-01", "0001-W01", "0001-01", 1},
      {253402265229, "9999-12-31T14:07", "9999-12-31T14", "9999-12-31", "9999-W52", "9999-12", 5},
      {-35571, "1969-12-31T14:07", "1969-12-31T14", "1969-12-31", "1970-W01", "1969-12", 3},
      {1772719629, "2026-03-05T14:07", "2026-03-05T14", "2026-03-05", "2026-W10", "2026-03", 4},
      {50829, "1970-01-01T14:07", "1970-01-01T14", "1970-01-01", "1970-W01", "1970-01", 4},
  };
  for (const Case& c : cases) {
    CAPTURE(c.day);
    CHECK(Bucket(c.t, TimeUnit::kMinute) == c.minute);
    CHECK(Bucket(c.t, TimeUnit::kHour) == c.hour);
    CHECK(Bucket(c.t, TimeUnit::kDay) == c.day);
    CHECK(Bucket(c.t, TimeUnit::kWeek) == c.week);
    CHECK(Bucket(c.t, TimeUnit::kMonth) == c.month);
    CHECK(ClockHour(c.t) == 14);
    CHECK(IsoWeekday(c.t) == c.weekday);
  }
}

// Intent: negative and fractional seconds floor toward the earlier bucket,
// and times outside 0001..9999 give no label rather than a wrong one.
TEST_CASE("FormatTimeBucket floors and bounds its input") {
  // 1970-01-01T00:00:00Z is epoch 0 (POSIX.1-2017 §4.16).
  CHECK(Bucket(-0.25, TimeUnit::kMinute) == "1969-12-31T23:59");
  CHECK(Bucket(59.999, TimeUnit::kMinute) == "1970-01-01T00:00");
  CHECK(ClockHour(-0.5) == 23);
  CHECK(Bucket(kMinEpochSeconds, TimeUnit::kDay) == "0001-01-01");
  CHECK(Bucket(kEndEpochSeconds - 0.5, TimeUnit::kMinute) == "9999-12-31T23:59");
  CHECK(Bucket(kMinEpochSeconds - 1, TimeUnit::kDay).empty());
  CHECK(Bucket(kEndEpochSeconds, TimeUnit::kDay).empty());
  CHECK(Bucket(NAN, TimeUnit::kDay).empty());
  CHECK(ClockHour(1e300) == -1);
  CHECK(IsoWeekday(-1e300) == -1);
}

// Intent: the inline UTC clock hour floors without libm: negative and
// fractional seconds (just below and at whole hours and days, at the range
// ends) give what Python's (math.floor(t) % 86400) // 3600 gives (floored
// modulo; computed here with std::floor as the reference).
TEST_CASE("ClockHourUtc floors negative and fractional seconds") {
  auto reference = [](double t) {
    const double s = std::floor(t);
    const double in_day = s - std::floor(s / 86400) * 86400;
    return static_cast<int>(in_day / 3600);
  };
  std::vector<double> ts = {0, -0.0, -1e-9, 1e-9, -0.5, 0.5, -3600, -3600.5, -3599.5, 3599.999, 3600, -86400,
                            -86400.25, -86399.75, 86399.5, kMinEpochSeconds, kMinEpochSeconds + 0.5,
                            kEndEpochSeconds - 0.5, kEndEpochSeconds - 1e-3, 1772323200.004, -1772323200.004};
  uint64_t state = 3;
  for (int i = 0; i < 20000; ++i) {
    state = state * 6364136223846793005ULL + 1442695040888963407ULL;
    const double u = static_cast<double>(state >> 11) / 9007199254740992.0;  // [0, 1)
    ts.push_back(kMinEpochSeconds + u * (kEndEpochSeconds - kMinEpochSeconds));
    ts.push_back(std::round(ts.back() / 3600) * 3600 - (i % 3) * 0.25);
  }
  for (const double t : ts) {
    CAPTURE(t);
    CHECK(ClockHourUtc(t) == reference(t));
  }
  CHECK(ClockHourUtc(kMinEpochSeconds - 0.5) == -1);
  CHECK(ClockHourUtc(kEndEpochSeconds) == -1);
  CHECK(ClockHourUtc(NAN) == -1);
}

// Intent: the civil-date conversion is a bijection over the whole range and
// has the day count Python gives it.
TEST_CASE("DaysFromCivil and CivilFromDays round-trip every day of 0001..9999") {
  // date(9999, 12, 31).toordinal() - date(1, 1, 1).toordinal() == 3652058
  // (computed with Python 3.11 datetime); 0001-01-01 is day -719162.
  const int64_t first = DaysFromCivil(1, 1, 1);
  const int64_t last = DaysFromCivil(9999, 12, 31);
  CHECK(first == -719162);
  CHECK(last - first == 3652058);
  CivilDate prev = CivilFromDays(first - 1);
  for (int64_t d = first; d <= last; ++d) {
    const CivilDate c = CivilFromDays(d);
    const bool next_day = c.day == prev.day + 1 && c.month == prev.month && c.year == prev.year;
    const bool next_month = c.day == 1 && ((c.month == prev.month + 1 && c.year == prev.year) ||
                                           (c.month == 1 && prev.month == 12 && c.year == prev.year + 1));
    if (!(next_day || next_month) || DaysFromCivil(c.year, c.month, c.day) != d) {
      FAIL("day " << d << " maps to " << c.year << "-" << c.month << "-" << c.day);
    }
    prev = c;
  }
}

// Intent: a random sweep over the whole range agrees with Python's datetime
// on every label, the hour and the weekday, and on parsing offsets.
TEST_CASE("random timestamps agree with python3 datetime") {
  const std::string out = expr_testing::RunPython(R"(import random
from datetime import datetime, timezone, timedelta
rnd = random.Random(20260305)
E = datetime(1970, 1, 1, tzinfo=timezone.utc)
for _ in range(3000):
    t = rnd.randrange(-62135596800, 253402300800) + rnd.choice([0, 0.25, 0.5, 0.75])
    d = E + timedelta(seconds=t)
    y, w, _ = d.isocalendar()
    print("B %r %04d-%02d-%02dT%02d:%02d %04d-W%02d %d %d" % (t, d.year, d.month, d.day,
          d.hour, d.minute, y, w, d.hour, d.weekday() + 1))
for _ in range(1000):
    t = rnd.randrange(-62135596800 + 86400, 253402300800 - 86400)
    off = rnd.randrange(-23 * 60, 24 * 60)
    local = E + timedelta(seconds=t) + timedelta(minutes=off)
    sign = "+" if off >= 0 else "-"
    text = local.strftime("%Y-%m-%dT%H:%M:%S").rjust(19, "0") + "%s%02d:%02d" % (
        sign, abs(off) // 60, abs(off) % 60)
    text = "%04d" % local.year + text[text.index("-"):]
    assert (datetime.fromisoformat(text) - E).total_seconds() == t
    print("P %s %d" % (text, t))
)");
  REQUIRE_MESSAGE(out.size() > 1000, "python3 did not run");
  std::istringstream in(out);
  std::string tag;
  int buckets = 0, parses = 0;
  while (in >> tag) {
    if (tag == "B") {
      double t;
      std::string minute, week;
      int hour, weekday;
      in >> t >> minute >> week >> hour >> weekday;
      CAPTURE(t);
      CHECK(Bucket(t, TimeUnit::kMinute) == minute);
      CHECK(Bucket(t, TimeUnit::kHour) == minute.substr(0, 13));
      CHECK(Bucket(t, TimeUnit::kDay) == minute.substr(0, 10));
      CHECK(Bucket(t, TimeUnit::kMonth) == minute.substr(0, 7));
      CHECK(Bucket(t, TimeUnit::kWeek) == week);
      CHECK(ClockHour(t) == hour);
      CHECK(IsoWeekday(t) == weekday);
      ++buckets;
    } else {
      std::string text;
      double expected, t = 0;
      in >> text >> expected;
      CAPTURE(text);
      CHECK(ParseIsoTimestamp(text, &t));
      CHECK(t == expected);
      ++parses;
    }
  }
  CHECK(buckets == 3000);
  CHECK(parses == 1000);
}

// Intent: the fast path (ParseIsoTimestamp on the common RFC 3339 shape)
// and the general parser agree on every text: both accept or both reject,
// and with the same bits. Texts: valid timestamps of every documented form,
// mutated (a byte replaced, deleted, inserted or duplicated, the text cut)
// thousands of times.
TEST_CASE("ParseIsoTimestamp's fast path equals the general parser on mutated timestamps") {
  const char* seeds[] = {
      "2026-03-05T14:07:09Z",          "2026-03-05T14:07:09.250Z",  "2026-03-05 14:07:09",
      "2026-03-05t14:07:09.123456789z", "2024-02-29T23:59:59.5",     "0001-01-01T00:00:00Z",
      "9999-12-31T23:59:59.999999999Z", "2026-03-05T14:07:09+01:00", "2026-03-05T14:07:09,5Z",
      "2026-03-05",                     "2026-03-05T14:07",          "2026-02-28T00:00:00.1234567891Z",
      "2026-03-05T14:07:09.5-05:30",    "2026-03-05T14:07:09-0530",  "2026-03-05T14:07:09+01",
  };
  const char alphabet[] = "0123456789-:TtZz.,+ 9059";
  uint64_t state = 42;
  auto next = [&state] {
    state = state * 6364136223846793005ULL + 1442695040888963407ULL;
    return state >> 33;
  };
  int accepted = 0, total = 0;
  for (int round = 0; round < 20000; ++round) {
    std::string text = seeds[next() % (sizeof seeds / sizeof seeds[0])];
    const int edits = static_cast<int>(next() % 3);
    for (int e = 0; e < edits && !text.empty(); ++e) {
      const size_t at = next() % text.size();
      const char c = alphabet[next() % (sizeof alphabet - 1)];
      switch (next() % 5) {
        case 0: text[at] = c; break;
        case 1: text.erase(at, 1); break;
        case 2: text.insert(text.begin() + static_cast<std::ptrdiff_t>(at), c); break;
        case 3: text.insert(at, 1, text[at]); break;
        default: text.resize(at); break;
      }
    }
    CAPTURE(text);
    double fast = -1, general = -1;
    const bool a = ParseIsoTimestamp(text, &fast);
    const bool b = ParseIsoTimestampGeneral(text, &general);
    REQUIRE(a == b);
    if (a) {
      CHECK(std::memcmp(&fast, &general, sizeof fast) == 0);
      ++accepted;
    }
    ++total;
  }
  CHECK(accepted > 3000);  // the sweep reaches both outcomes
  CHECK(total - accepted > 3000);
}

// Intent: the fast path remembers the last minute ("YYYY-MM-DDThh:mm") it
// read; texts that share those sixteen bytes with the one before (the usual
// case in a log) and differ after them (seconds, fraction, zone, mutated
// bytes) still equal the general parser, as do texts that differ from the
// remembered minute in one byte of it.
TEST_CASE("ParseIsoTimestamp's remembered minute equals the general parser") {
  const char* minutes[] = {"2026-03-05T14:07", "2026-03-05 14:07", "2024-02-29t23:59", "2026-03-05T14:08"};
  const char* tails[] = {":09Z", ":09.250Z", ":59.999999999+01:00", ":00", ":60Z", ":5Z", ":09.Z", ":09.1234567891z",
                         ":09-05:30", ":09+0530", "", ":", ":09.250Zx", ":0a.250Z", ";09Z"};
  const char alphabet[] = "0123456789-:TtZz.+ ";
  uint64_t state = 7;
  auto next = [&state] {
    state = state * 6364136223846793005ULL + 1442695040888963407ULL;
    return state >> 33;
  };
  int accepted = 0, total = 0;
  for (int round = 0; round < 20000; ++round) {
    std::string text = std::string(minutes[(round / 50) % 4]) + tails[next() % (sizeof tails / sizeof tails[0])];
    if (next() % 4 == 0) text[next() % text.size()] = alphabet[next() % (sizeof alphabet - 1)];
    CAPTURE(text);
    double fast = -1, general = -1;
    const bool a = ParseIsoTimestamp(text, &fast);
    const bool b = ParseIsoTimestampGeneral(text, &general);
    REQUIRE(a == b);
    if (a) {
      CHECK(std::memcmp(&fast, &general, sizeof fast) == 0);
      ++accepted;
    }
    ++total;
  }
  CHECK(accepted > 3000);
  CHECK(total - accepted > 3000);
}

// Intent: on the fast path's shape, values equal Python's exactly:
// calendar.timegm of the fields less the offset, plus the fraction digits
// over 10^k (Python's int / int true division rounds once, as the parser's
// division does).
TEST_CASE("the common RFC 3339 shape agrees with python3 calendar.timegm") {
  const std::string out = expr_testing::RunPython(R"(import random, calendar
rnd = random.Random(1302)
for _ in range(3000):
    y, mo = rnd.randrange(1, 10000), rnd.randrange(1, 13)
    d = rnd.randrange(1, calendar.monthrange(y, mo)[1] + 1)
    h, mi, s = rnd.randrange(24), rnd.randrange(60), rnd.randrange(60)
    k = rnd.choice([0, 0, 1, 3, 6, 9])
    num = rnd.randrange(10 ** k) if k else 0
    frac = ("." + str(num).rjust(k, "0")) if k else ""
    off = rnd.choice([None, None, None, 0, rnd.randrange(-23 * 60 - 59, 24 * 60)])
    zone = rnd.choice(["Z", "z", ""]) if off is None else "%s%02d:%02d" % ("-" if off < 0 else "+", abs(off) // 60,
                                                                              abs(off) % 60)
    text = "%04d-%02d-%02d%s%02d:%02d:%02d%s%s" % (y, mo, d, rnd.choice("T T t"), h, mi, s, frac, zone)
    sec = calendar.timegm((y, mo, d, h, mi, s, 0, 0, 0)) - 60 * (off or 0)  # local = UTC + offset
    print(text.replace(" ", "_"), repr(float(sec) + (num / 10 ** k if k else 0.0)))
)");
  REQUIRE_MESSAGE(out.size() > 1000, "python3 did not run");
  std::istringstream in(out);
  std::string text;
  double expected;
  int n = 0;
  while (in >> text >> expected) {
    for (char& c : text)
      if (c == '_') c = ' ';
    CAPTURE(text);
    double t = 0;
    REQUIRE(ParseIsoTimestamp(text, &t));
    CHECK(t == expected);
    ++n;
  }
  CHECK(n == 3000);
}

}  // namespace fanfold
