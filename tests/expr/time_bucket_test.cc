// Tests for the zone-aware time functions (common/expr/time_bucket,
// time_zone, time_arguments): period_start/span_start/clock_hour/weekday in
// IANA zones across daylight-saving transitions, checked against Python's
// zoneinfo + datetime reading the same tz database (/usr/share/zoneinfo),
// run at test time; offsets parsed as Python 3.11's datetime.fromisoformat.
#include "common/expr/time_bucket.h"

#include <doctest/doctest.h>

#include <cstdio>
#include <set>
#include <sstream>
#include <string>
#include <vector>

#include "tests/expr/expr_test_util.h"

namespace fanfold {
namespace {

using expr_testing::Eval;
using expr_testing::RunPython;


// The expressions the sweep evaluates, in the order the script prints its
// answers; ZONE is replaced by the zone's name.
const char* const kForms[] = {
    "period_start({/t}, 'day', 'ZONE')",
    "period_start({/t}, 'hour', 'ZONE')",
    "period_start({/t}, '15 minutes', 'ZONE')",
    "period_start({/t}, '2 hours', 'ZONE')",
    "period_start({/t}, '6 hours', 'ZONE')",
    "period_start({/t}, 'week', 'ZONE')",
    "period_start({/t}, 'month', 'ZONE')",
    "period_start({/t}, '3 months', 'ZONE')",
    "period_start({/t}, '2 days', 'ZONE')",
    "span_start({/t}, '90 minutes', 'ZONE')",
    "span_start({/t}, 'day', 'ZONE')",
    "text(clock_hour({/t}, 'ZONE'))",
    "text(weekday({/t}, 'ZONE'))",
};

// Python's answers. Bucket starts of the local-calendar forms are found by
// brute force, an independent reading of the documented rule: walk back
// minute by minute (transitions fall on whole minutes) to the last instant
// the clock showed the slot's start, or to where it jumped into the slot.
const char* const kScript = R"(
from datetime import datetime, timezone, timedelta, date
from zoneinfo import ZoneInfo
import random
rnd = random.Random(12)
def slot(tz, x, width):
    d = datetime.fromtimestamp(x, tz)
    m = (d.hour * 60 + d.minute) // width * width
    return (d.date(), m)
def start(tz, t, width):
    s = slot(tz, t, width)
    b = t // 60 * 60
    while True:
        d = datetime.fromtimestamp(b, tz)
        if d.hour * 60 + d.minute == s[1]:
            return b  # the clock shows the slot's start
        if slot(tz, b - 60, width) != s:
            return b  # the clock jumped into the slot here
        b -= 60
def iso(tz, b):
    return datetime.fromtimestamp(b, tz).isoformat(timespec="minutes")
def answers(name, t):
    tz = ZoneInfo(name)
    d = datetime.fromtimestamp(t, tz)
    y, w, wd = d.isocalendar()
    days = (d.date() - date(1970, 1, 1)).days // 2 * 2
    return [d.date().isoformat(), iso(tz, start(tz, t, 60)), iso(tz, start(tz, t, 15)),
            iso(tz, start(tz, t, 120)), iso(tz, start(tz, t, 360)), "%04d-W%02d" % (y, w),
            "%04d-%02d" % (d.year, d.month), "%04d-%02d" % (d.year, (d.month - 1) // 3 * 3 + 1),
            (date(1970, 1, 1) + timedelta(days=days)).isoformat(),
            iso(tz, t // 5400 * 5400), iso(tz, t // 86400 * 86400), str(d.hour), str(wd)]
zones = ["Europe/Berlin", "America/New_York", "Asia/Kolkata", "Australia/Lord_Howe"]
for name in zones:
    tz = ZoneInfo(name)
    instants = []
    # Every transition of 2025 and 2026 (found hour by hour, then to the
    # second), and instants around it: either side, and every 37 minutes
    # for 14 hours each way.
    t = int(datetime(2025, 1, 1, tzinfo=timezone.utc).timestamp())
    end = int(datetime(2027, 1, 1, tzinfo=timezone.utc).timestamp())
    off = datetime.fromtimestamp(t, tz).utcoffset()
    while t < end:
        o = datetime.fromtimestamp(t + 3600, tz).utcoffset()
        if o != off:
            lo, hi = t, t + 3600
            while hi - lo > 1:
                mid = (lo + hi) // 2
                if datetime.fromtimestamp(mid, tz).utcoffset() == off: lo = mid
                else: hi = mid
            instants += [hi - 1, hi, hi + 1] + [hi + k * 37 * 60 + 13 for k in range(-23, 23)]
            off = o
        t += 3600
    # And a random sample 1971..2037 (the database's transitions end in 2037).
    instants += [rnd.randrange(31536000, 2145916800) for _ in range(150)]
    for t in instants:
        print(name, t, " ".join(answers(name, t)))
)";

}  // namespace

// Intent: every form agrees with Python's zoneinfo on instants either side of
// each 2025/2026 transition of four zones (whole-hour, half-hour offsets and
// a half-hour daylight-saving shift) and on a random sample of 1971..2037.
TEST_CASE("zone-aware time functions agree with Python's zoneinfo") {
  const std::string out = RunPython(kScript);
  REQUIRE_MESSAGE(out.size() > 10000, "python3 did not run");
  std::istringstream in(out);
  std::string zone;
  int64_t t;
  int lines = 0;
  std::string prev_zone;
  std::vector<Result<Expr>> exprs;
  FieldTable fields;
  while (in >> zone >> t) {
    if (zone != prev_zone) {
      exprs.clear();
      for (const char* form : kForms) {
        std::string text = form;
        text.replace(text.find("ZONE"), 4, zone);
        exprs.push_back(Expr::Compile(text, &fields));
        REQUIRE_MESSAGE(exprs.back().ok(), text);
      }
      prev_zone = zone;
    }
    std::vector<Value> slots(fields.size());
    slots[fields.InternField("/t")] = Value::Int(t);
    ScratchArena arena;
    for (size_t i = 0; i < std::size(kForms); ++i) {
      std::string want;
      in >> want;
      const Value v = exprs[i].value().Eval(slots.data(), &arena);
      CAPTURE(zone);
      CAPTURE(t);
      CAPTURE(kForms[i]);
      CHECK(std::string(v.str) == want);
    }
    ++lines;
  }
  CHECK(lines > 1000);
}

// Intent: a local day has 23 hour buckets on the spring-forward day and 25 on
// the fall-back day (Python: (next midnight - midnight) / 3600 with zoneinfo
// gives 23 and 25 for these dates in both zones).
TEST_CASE("local days of 23 and 25 hours") {
  struct Case {
    const char* zone;
    int64_t midnight;  // local midnight, epoch seconds (Python zoneinfo)
    int hours;
  } cases[] = {
      {"Europe/Berlin", 1774738800, 23},     // 2026-03-29
      {"Europe/Berlin", 1792879200, 25},     // 2026-10-25
      {"America/New_York", 1772946000, 23},  // 2026-03-08
      {"America/New_York", 1793505600, 25},  // 2026-11-01
  };
  for (const Case& c : cases) {
    CAPTURE(c.zone);
    std::set<std::string> hours, days;
    for (int64_t t = c.midnight; t < c.midnight + c.hours * 3600; t += 300) {
      const std::string ts = std::to_string(t);
      hours.insert(Eval("period_start(" + ts + ", 'hour', '" + c.zone + "')"));
      days.insert(Eval("period_start(" + ts + ", 'day', '" + c.zone + "')"));
    }
    CHECK(hours.size() == static_cast<size_t>(c.hours));
    CHECK(days.size() == 1);
    CHECK(Eval("period_start(" + std::to_string(c.midnight - 1) + ", 'day', '" + c.zone + "')") !=
          *days.begin());
    CHECK(Eval("period_start(" + std::to_string(c.midnight + c.hours * 3600) + ", 'day', '" + c.zone +
               "')") != *days.begin());
  }
  // The repeated hour of New York's fall-back is two buckets, told apart by
  // their offsets (Python: datetime.fromtimestamp(1793509200 / 1793512800,
  // ZoneInfo("America/New_York")).isoformat(timespec="minutes")).
  CHECK(Eval("period_start(1793511000, 'hour', 'America/New_York')") == "'2026-11-01T01:00-04:00'");
  CHECK(Eval("period_start(1793514600, 'hour', 'America/New_York')") == "'2026-11-01T01:00-05:00'");
  // A 2-hour slot the clock skips into starts at the transition.
  CHECK(Eval("period_start(1772955000, '2 hours', 'America/New_York')") == "'2026-03-08T03:00-04:00'");
}

// Intent: offsets ±hh, ±hhmm and ±hh:mm parse as Python 3.11's
// datetime.fromisoformat reads them (epochs computed with it).
TEST_CASE("timestamps with short offsets") {
  CHECK(Eval("time('2026-03-05T14:07:09+05')") == "1772701629");
  CHECK(Eval("time('2026-03-05T14:07:09+0530')") == "1772699829");
  CHECK(Eval("time('2026-03-05T14:07:09+05:30')") == "1772699829");
  CHECK(Eval("time('2026-03-05T14:07:09-03')") == "1772730429");
  CHECK(Eval("time('2026-03-05T14:07-0930')") == "1772753820");
  CHECK(Eval("time('2026-03-05T14:07:09+5')") == "missing");
  CHECK(Eval("time('2026-03-05T14:07:09+05:')") == "missing");
  CHECK(Eval("time('2026-03-05T14:07:09+053')") == "missing");
}

// Intent: the literal arguments are checked at compile time, a misspelt zone
// with a suggestion from the tz database's names.
TEST_CASE("time arguments: golden compile errors") {
  CHECK(Eval("period_start({/t}, 'day', 'Europe/Berln')") ==
        "!! column 27: unknown time zone 'Europe/Berln' (did you mean 'Europe/Berlin'?); expected "
        "an IANA time zone name such as 'Europe/Berlin'");
  CHECK(Eval("clock_hour({/t}, {/zone})") ==
        "!! column 18: a time zone that is not a string literal; expected an IANA time zone name "
        "such as 'Europe/Berlin'");
  CHECK(Eval("period_start({/t}, '0 minutes')") ==
        "!! column 20: count in '0 minutes'; expected a whole number from 1 to 1440");
  CHECK(Eval("period_start({/t}, '2 weeks')") ==
        "!! column 20: count in '2 weeks'; expected no count with 'week'");
  CHECK(Eval("period_start({/t}, '15 minuets')") ==
        "!! column 20: unit '15 minuets'; expected a count and one of 'minutes', 'hours', "
        "'days', 'months', e.g. '15 minutes'");
  CHECK(Eval("span_start({/t}, 'month')") ==
        "!! column 18: unit 'month' in span_start(); expected minutes, hours or days, e.g. '90 "
        "minutes' (span_start() cuts fixed lengths; period_start() follows the calendar)");
  CHECK(Eval("period_start(0, '15 minutes')") == "'1970-01-01T00:00'");
  CHECK(Eval("period_start(0, '1 hours')") == "'1970-01-01T00'");
}

}  // namespace fanfold

namespace fanfold {

// Intent: records alternating between zones (each thread caches one offset
// span per zone) still get each zone's own local hour, as Python's zoneinfo
// gives it, across the March 2026 transitions of both zones.
TEST_CASE("alternating zones keep their own offsets") {
  const std::string out = RunPython(R"(
from datetime import datetime
from zoneinfo import ZoneInfo
b, n = ZoneInfo("Europe/Berlin"), ZoneInfo("America/New_York")
for t in range(1772841600, 1774915200, 1200):
    print(t, datetime.fromtimestamp(t, b).hour, datetime.fromtimestamp(t, n).hour)
)");
  REQUIRE_MESSAGE(out.size() > 10000, "python3 did not run");
  FieldTable fields;
  Result<Expr> berlin = Expr::Compile("clock_hour({/t}, 'Europe/Berlin')", &fields);
  Result<Expr> new_york = Expr::Compile("clock_hour({/t}, 'America/New_York')", &fields);
  REQUIRE(berlin.ok());
  REQUIRE(new_york.ok());
  std::istringstream in(out);
  int64_t t;
  int64_t want_b, want_n;
  int lines = 0;
  ScratchArena arena;
  std::vector<Value> slots(fields.size());
  while (in >> t >> want_b >> want_n) {
    CAPTURE(t);
    slots[0] = Value::Int(t);
    CHECK(berlin.value().Eval(slots.data(), &arena).Wide() == want_b);
    CHECK(new_york.value().Eval(slots.data(), &arena).Wide() == want_n);
    ++lines;
  }
  CHECK(lines > 1000);
}

}  // namespace fanfold

namespace fanfold {

// Intent: past the database's 2037 horizon, offsets follow the zones' current
// rules as Python's zoneinfo (which reads the TZ rule at the end of each
// file) gives them, for 2038..2099, in zones of both hemispheres, a zone whose
// rules changed in 2023 (America/Nuuk, Africa/Cairo) and zones without
// daylight saving now (Asia/Kolkata, America/Sao_Paulo).
TEST_CASE("offsets after 2037 follow the current rules") {
  const std::string out = RunPython(R"(
from datetime import datetime
from zoneinfo import ZoneInfo
import random
rnd = random.Random(2099)
for name in ["Europe/Berlin", "America/New_York", "Australia/Lord_Howe", "America/Santiago",
             "Africa/Cairo", "America/Nuuk", "Asia/Kolkata", "America/Sao_Paulo", "Pacific/Chatham"]:
    tz = ZoneInfo(name)
    for _ in range(400):
        t = rnd.randrange(2145916800, 4102444800)
        print(name, t, datetime.fromtimestamp(t // 60 * 60, tz).isoformat(timespec="minutes"))
)");
  REQUIRE_MESSAGE(out.size() > 10000, "python3 did not run");
  std::istringstream in(out);
  std::string zone, want;
  int64_t t;
  int lines = 0;
  while (in >> zone >> t >> want) {
    CAPTURE(zone);
    CAPTURE(t);
    CHECK(Eval("period_start(" + std::to_string(t) + ", 'minute', '" + zone + "')") == "'" + want + "'");
    ++lines;
  }
  CHECK(lines == 3600);
}

}  // namespace fanfold
