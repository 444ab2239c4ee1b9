// Tests for common/expr/functions through compiled expressions: every
// function on strings, numbers, bools, null, missing and objects.
#include "common/expr/functions.h"

#include <doctest/doctest.h>

#include "tests/expr/expr_test_util.h"

namespace fanfold {

using expr_testing::CheckAll;
using expr_testing::kLamp;

// Intent: the string functions fold ASCII only (Python bytes.lower()/upper()
// semantics), count bytes (UTF-8, RFC 3629: 'é' is two), clamp substr, and
// read numbers as text() prints them.
TEST_CASE("string functions") {
  CheckAll({
      {"lower({/event})", "'fault'"},
      {"upper({/district})", "'NORTHWICK'"},
      {"lower({/lamp})", "'nw-0042'"},
      {"lower('already lower')", "'already lower'"},
      {"upper('\xc3\xa9t\xc3\xa9')", "'\xc3\xa9T\xc3\xa9'"},  // b'\xc3\xa9t\xc3\xa9'.upper()
      {"upper(1e-7)", "'1E-07'"},
      {"lower({/absent})", "missing"},
      {"lower({/note})", "missing"},
      {"upper({/dimmed})", "'TRUE'"},
      {"starts_with({/lamp}, 'NW-')", "true"},
      {"starts_with({/lamp}, 'SE-')", "false"},
      {"ends_with({/lamp}, '42')", "true"},
      {"ends_with({/power_w}, '.5')", "true"},
      {"contains({/fw/version}, '.4.')", "true"},
      {"contains({/fw/version}, '')", "true"},
      {"contains({/absent}, 'x')", "missing"},
      {"contains({/lamp}, {/absent})", "missing"},
      {"len({/lamp})", "7"},
      {"len('\xc3\xa9')", "2"},
      {"len({/empty})", "0"},
      {"len({/power_w})", "4"},
      {"len({/readings})", "missing"},
      {"substr({/lamp}, 0, 2)", "'NW'"},
      {"substr({/lamp}, 3)", "'0042'"},
      {"substr({/lamp}, -5, 2)", "'NW'"},
      {"substr({/lamp}, 5, 100)", "'42'"},
      {"substr({/lamp}, 100)", "''"},
      {"substr({/lamp}, 2, -1)", "''"},
      {"substr({/lamp}, 1.9, 1.9)", "'W'"},     // offsets are floored
      {"substr({/lamp}, 'x')", "missing"},
      {"substr({/lamp}, 0, {/absent})", "missing"},
      {"substr({/epoch}, 0, 4)", "'1772'"},
      {"substr({/latency_ms}, {/latency_ms} - 119)", "'20'"},
  }, kLamp);
}

// Intent: presence tests, coalesce, bin, num and text behave as documented;
// text() prints shortest round-trip digits (the digits Python's repr gives).
TEST_CASE("presence and conversion functions") {
  CheckAll({
      {"has({/lamp})", "true"},
      {"has({/empty})", "true"},
      {"has({/readings})", "true"},
      {"has({/note})", "false"},
      {"has({/absent})", "false"},
      {"lacks({/note})", "true"},
      {"lacks({/lamp})", "false"},
      {"has(1 / 0)", "false"},
      {"coalesce({/absent}, {/note}, {/lamp})", "'NW-0042'"},
      {"coalesce({/empty}, 'x')", "''"},
      {"coalesce({/absent})", "missing"},
      {"coalesce({/absent}, {/note})", "missing"},
      {"coalesce(1,2,3,4,5,6,7,8,9,10,11,12,13,14,15,16)", "1"},
      {"coalesce({/a1},{/a2},{/a3},{/a4},{/a5},{/a6},{/a7},{/a8},{/a9},{/a10},{/a11},{/a12},"
       "{/a13},{/a14},{/a15},{/power_w})", "61.5"},
      {"bucket_start({/power_w}, 10)", "60"},
      {"bucket_start(-7, 5)", "-10"},                    // Python: math.floor(-7 / 5) * 5
      {"bucket_start({/latency_ms}, 50)", "100"},
      {"bucket_start(0.37, 0.25)", "0.25"},
      {"bucket_start({/power_w}, 0)", "missing"},
      {"bucket_start({/power_w}, -10)", "missing"},
      {"bucket_start({/lamp}, 10)", "missing"},
      {"num({/latency_ms})", "120"},
      {"num(' 12')", "missing"},
      {"num('+12.5')", "12.5"},
      {"num({/dimmed})", "missing"},
      {"num({/lamp})", "missing"},
      {"num('nan')", "missing"},
      {"text({/power_w})", "'61.5'"},
      {"text(0.1 + 0.2)", "'0.30000000000000004'"},  // Python repr(0.1 + 0.2)
      {"text(100000)", "'100000'"},
      {"text(1e21)", "'1e+21'"},                // Python repr(1e21)
      {"text(123456789012345680000)", "'1.2345678901234568e+20'"},  // Python repr
      {"text(9007199254740993)", "'9007199254740993'"},  // an integer literal is exact: Python str(2**53 + 1)
      {"text(9007199254740993.0)", "'9007199254740992'"},  // a double: Python int(9007199254740993.0) == 2**53
      {"text(0.000001)", "'0.000001'"},
      {"text(1e-7)", "'1e-07'"},                // Python repr(1e-7)
      {"text(-0)", "'0'"},
      {"text(-2.5)", "'-2.5'"},
      {"text({/epoch})", "'1772719629'"},
      {"text({/dimmed})", "'true'"},
      {"text(false)", "'false'"},
      {"text({/lamp})", "'NW-0042'"},
      {"text({/note})", "missing"},
      {"text({/readings})", "missing"},
  }, kLamp);
}

// Intent: time functions read ISO 8601 text and epoch numbers and bucket in
// UTC. Expected values computed with Python 3.11 datetime
// (datetime.fromisoformat(...).timestamp(), date.isocalendar(),
// datetime.weekday() + 1).
TEST_CASE("time functions") {
  CheckAll({
      {"time({/ts})", "1772716029.25"},
      {"time('2026-03-05')", "1772668800"},
      {"time({/epoch})", "1772719629"},
      {"time('1772719629')", "1772719629"},     // numeric text, as CSV gives it
      {"time({/lamp})", "missing"},
      {"time({/dimmed})", "missing"},
      {"time({/absent})", "missing"},
      {"time('2026-02-29')", "missing"},        // not a leap year
      {"time_ms({/epoch_ms})", "1772719629.25"},
      {"time_ms(1772719629250)", "1772719629.25"},
      {"time_ms({/ts})", "1772716029.25"},      // text is read as for time()
      {"period_start({/epoch}, 'minute')", "'2026-03-05T14:07'"},
      {"period_start({/epoch}, 'hour')", "'2026-03-05T14'"},
      {"period_start({/epoch}, 'day')", "'2026-03-05'"},
      {"period_start({/epoch}, 'week')", "'2026-W10'"},
      {"period_start({/epoch}, 'month')", "'2026-03'"},
      {"period_start(time({/ts}), 'hour')", "'2026-03-05T13'"},
      {"period_start({/ts}, 'minute')", "'2026-03-05T13:07'"},  // ISO text accepted directly
      {"period_start('2020-12-31T12:00Z', 'week')", "'2020-W53'"},
      {"period_start('2021-01-03', 'week')", "'2020-W53'"},
      {"period_start('2024-12-30', 'week')", "'2025-W01'"},
      {"period_start('2024-02-29T23:59:59.999', 'day')", "'2024-02-29'"},
      {"period_start('2024-03-01T00:30+01:00', 'day')", "'2024-02-29'"},
      {"period_start(time_ms({/epoch_ms}), 'minute')", "'2026-03-05T14:07'"},
      {"period_start(1e300, 'day')", "missing"},
      {"period_start({/lamp}, 'day')", "missing"},
      {"clock_hour({/epoch})", "14"},
      {"clock_hour({/ts})", "13"},
      {"clock_hour(-1)", "23"},
      {"weekday({/epoch})", "4"},               // a Thursday
      {"weekday('2021-01-03')", "7"},
      {"weekday('2024-12-30')", "1"},
      {"weekday({/absent})", "missing"},
  }, kLamp);
}


// Intent: the catalogue lists every function once, with the documented arity.
TEST_CASE("function catalogue") {
  const ExprFunctionInfo* f = FindExprFunction("substr");
  REQUIRE(f != nullptr);
  CHECK(f->min_args == 2);
  CHECK(f->max_args == 3);
  CHECK(FindExprFunction("coalesce")->max_args == kMaxFunctionArgs);
  CHECK(FindExprFunction("Substr") == nullptr);
  CHECK(FindExprFunction("") == nullptr);
}

}  // namespace fanfold
