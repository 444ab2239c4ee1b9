// Tests for Expr (common/expr/expr.h): compilation against a FieldTable, every
// operator evaluated on records, the missing/null rules, compile-time
// errors, and evaluation without heap allocation. The functions are tested
// in expr_functions_test.cc.
#include "common/expr/expr.h"

#include <doctest/doctest.h>

#include <atomic>
#include <cstdlib>
#include <initializer_list>
#include <new>
#include <string>
#include <utility>
#include <vector>

#include "tests/expr/expr_test_util.h"

// Counts global operator new calls while a CountAllocations scope is alive,
// so the no-allocation test can see a single stray allocation. Outside the
// scope these forward to malloc/free unchanged.
namespace {
std::atomic<bool> g_counting{false};
std::atomic<long> g_allocations{0};
}  // namespace

#if defined(__GNUC__) && !defined(__clang__)
// GCC sees free() on memory from a (replaced) operator new once inlined; the
// pair is consistent here because operator new is malloc.
#pragma GCC diagnostic ignored "-Wmismatched-new-delete"
#endif
void* operator new(std::size_t n) {
  if (g_counting.load(std::memory_order_relaxed)) g_allocations.fetch_add(1);
  if (void* p = std::malloc(n == 0 ? 1 : n)) return p;
  throw std::bad_alloc();
}
void* operator new[](std::size_t n) { return operator new(n); }
void operator delete(void* p) noexcept { std::free(p); }
void operator delete[](void* p) noexcept { std::free(p); }
void operator delete(void* p, std::size_t) noexcept { std::free(p); }
void operator delete[](void* p, std::size_t) noexcept { std::free(p); }
// The nothrow forms too, so that no allocation escapes the malloc/free pair
// (AddressSanitizer checks that what new[] gave is what free() gets).
void* operator new(std::size_t n, const std::nothrow_t&) noexcept {
  if (g_counting) ++g_allocations;
  return std::malloc(n ? n : 1);
}
void* operator new[](std::size_t n, const std::nothrow_t& t) noexcept { return operator new(n, t); }
void operator delete(void* p, const std::nothrow_t&) noexcept { std::free(p); }
void operator delete[](void* p, const std::nothrow_t&) noexcept { std::free(p); }

namespace fanfold {
namespace {

class CountAllocations {
 public:
  CountAllocations() {
    g_allocations = 0;
    g_counting = true;
  }
  ~CountAllocations() { g_counting = false; }
  long count() const { return g_allocations.load(); }
};

}  // namespace

using expr_testing::B;
using expr_testing::Case;
using expr_testing::CheckAll;
using expr_testing::Eval;
using expr_testing::kLamp;
using expr_testing::N;
using expr_testing::S;
using expr_testing::Show;

// Intent: arithmetic follows IEEE 754 doubles (the reference values are what
// Python 3 floats give), reads numeric text, and yields missing for unusable
// operands, division by zero and overflow.
TEST_CASE("arithmetic") {
  CheckAll({
      {"1 + 2 * 3", "7"},
      {"(1 + 2) * 3", "9"},
      {"10 - 4 - 3", "3"},
      {"7 / 2", "3.5"},
      {"0.1 + 0.2", "0.30000000000000004"},  // Python: 0.1 + 0.2
      {"7 % 3", "1"},
      {"-7 % 3", "-1"},                      // Python: math.fmod(-7, 3) == -1.0
      {"7.5 % 2", "1.5"},
      {"-{/power_w}", "-61.5"},
      {"- -{/power_w}", "61.5"},
      {"{/power_w} * 2 - 3", "120"},
      {"{/latency_ms} + 1", "121"},          // numeric text counts as a number
      {"{/latency_ms} / 1000", "0.12"},
      {"1 / 0", "missing"},
      {"{/power_w} % 0", "missing"},
      {"{/power_w} / ({/latency_ms} - 120)", "missing"},
      {"{/absent} + 1", "missing"},
      {"{/note} + 1", "missing"},
      {"{/lamp} + 1", "missing"},
      {"{/dimmed} + 1", "missing"},
      {"{/readings} * 2", "missing"},
      {"-{/lamp}", "missing"},
      {"1e308 * 10", "missing"},              // overflow to infinity
  }, kLamp);
}

// Intent: comparisons are numeric when both sides are numeric, bytewise for
// strings, and false whenever a side is missing or null — != included.
TEST_CASE("comparisons") {
  CheckAll({
      {"{/power_w} > 60", "true"},
      {"{/power_w} >= 61.5", "true"},
      {"{/power_w} < 61.5", "false"},
      {"{/power_w} <= 61.5", "true"},
      {"{/power_w} == 61.5", "true"},
      {"{/power_w} != 61.5", "false"},
      {"60 < {/power_w}", "true"},            // constant on the left
      {"61.5 <= {/power_w}", "true"},
      {"62 > {/power_w}", "true"},
      {"{/latency_ms} == 120", "true"},       // numeric text vs number
      {"{/latency_ms} == '120.0'", "true"},   // both numeric: compared as numbers
      {"{/latency_ms} > 99", "true"},         // numerically, although '120' < '99' as text
      {"{/latency_ms} > {/power_w}", "true"},
      {"{/district} == 'Northwick'", "true"},
      {"{/district} != 'Eastgate'", "true"},
      {"{/district} == 'northwick'", "false"},
      {"{/district} > 'Eastgate'", "true"},   // bytewise
      {"'Z' < 'a'", "true"},                  // ASCII 0x5a < 0x61
      {"'\xc3\xa9' > 'z'", "true"},           // bytes compare unsigned: Python b'\xc3\xa9' > b'z'
      {"'abc' < 'abcd'", "true"},
      {"{/ts} >= '2026-03-01'", "true"},
      {"{/lamp} == 12", "false"},             // text vs number: unequal
      {"{/lamp} != 12", "true"},
      {"{/lamp} < 12", "false"},              // and unordered
      {"{/dimmed} == true", "true"},
      {"{/dimmed} != false", "true"},
      {"{/dimmed} == 1", "false"},            // bools are not numbers
      {"{/dimmed} < true", "false"},
      {"{/readings} == 'x'", "false"},
      {"{/readings} != 'x'", "true"},
      {"{/absent} == 1", "false"},
      {"{/absent} != 1", "false"},
      {"{/absent} < 1", "false"},
      {"{/absent} == {/absent}", "false"},
      {"{/note} != 'x'", "false"},
      {"{/note} == {/note}", "false"},
      {"{/power_w} != {/absent}", "false"},
      {"{/empty} == ''", "true"},
      {"{/power_w} == {/power_w}", "true"},
      {"{/fw/version} == '2.4.1'", "true"},
      {"{/power_w} > 1 / 0", "false"},        // a missing constant side
      {"{/power_w} != 1 / 0", "false"},
  }, kLamp);
}

// Intent: and/or/not use truthiness, give bools, and bind as documented.
TEST_CASE("logic") {
  CheckAll({
      {"{/power_w} and {/lamp}", "true"},
      {"{/power_w} and {/empty}", "false"},
      {"{/absent} or {/note}", "false"},
      {"{/absent} or 0 or 'x'", "true"},
      {"not {/absent}", "true"},
      {"not {/power_w}", "false"},
      {"not not {/lamp}", "true"},
      {"not {/empty}", "true"},
      {"{/readings} and true", "true"},
      {"{/event} == 'FAULT' and {/power_w} > 100 or {/dimmed}", "true"},
      {"{/event} == 'FAULT' and ({/power_w} > 100 or {/dimmed})", "true"},
      {"{/event} == 'OK' or {/power_w} > 60 and not {/dimmed}", "false"},
      {"not {/event} == 'OK'", "true"},
      {"true", "true"},
      {"0", "0"},
      {"null", "null"},
  }, kLamp);
}

// Intent: membership uses == semantics against a compiled set; missing and
// null are in nothing and not-in nothing.
TEST_CASE("in and not in") {
  CheckAll({
      {"{/district} in ['Eastgate', 'Northwick']", "true"},
      {"{/district} in ['Eastgate', 'northwick']", "false"},
      {"{/district} not in ['Eastgate']", "true"},
      {"{/district} not in ['Northwick', 'Northwick']", "false"},
      {"{/power_w} in [1, 61.5, 200]", "true"},
      {"{/power_w} in ['61.5']", "true"},      // numeric text matches numerically
      {"{/latency_ms} in [120]", "true"},
      {"{/latency_ms} in ['120.00', 'x']", "true"},
      {"{/latency_ms} in [-120, 12]", "false"},
      {"{/power_w} * -1 in [-61.5]", "true"},
      {"{/lamp} in [42, true]", "false"},
      {"{/dimmed} in [true]", "true"},
      {"{/dimmed} in [false, 1]", "false"},
      {"{/dimmed} not in [false]", "true"},
      {"{/absent} in ['x']", "false"},
      {"{/absent} not in ['x']", "false"},
      {"{/note} not in ['x']", "false"},
      {"{/readings} in ['x']", "false"},
      {"{/readings} not in ['x']", "true"},
      {"{/event} in []", "false"},
      {"{/event} not in []", "true"},
      {"lower({/event}) in ['fault', 'reboot']", "true"},
      {"2 in [1, 2, 3]", "true"},               // folded at compile time
  }, kLamp);
}

// Intent: bare names read derived fields defined earlier; an unknown name
// is the documented error.
TEST_CASE("derived fields") {
  FieldTable fields;
  const int lamp = fields.InternField("/lamp");
  const int zone = fields.AddDerived("zone");
  Result<Expr> e = Expr::Compile("zone == 'NW' and starts_with({/lamp}, zone)", &fields);
  REQUIRE(e.ok());
  std::vector<Value> slots(fields.size());
  slots[lamp] = S("NW-0042");
  slots[zone] = S("NW");
  ScratchArena arena;
  CHECK(Show(e->Eval(slots.data(), &arena)) == "true");
  slots[zone] = S("SE");
  CHECK(Show(e->Eval(slots.data(), &arena)) == "false");

  Result<Expr> bad = Expr::Compile("{/power_w} > limit", &fields);
  REQUIRE_FALSE(bad.ok());
  CHECK(bad.status().code() == Status::Code::kInvalidArgument);
  CHECK(bad.status().message() ==
        "column 14: unknown derived field 'limit'; derived fields must be defined earlier in "
        "\"derive\"");
}

// Intent: each compile-time error points at the offending name or literal
// and says what is expected.
TEST_CASE("compile errors: golden messages") {
  const std::string all =
      "lower(s), upper(s), starts_with(s, prefix), ends_with(s, suffix), contains(s, part), "
      "len(s), substr(s, start[, count]), has(x), lacks(x), coalesce(a, b, ...), bucket_start(x, width), "
      "num(x), text(x), time(x), time_ms(x), period_start(t, unit[, zone]), clock_hour(t[, zone]), "
      "weekday(t[, zone]), span_start(t, length[, zone]), branch(test, value, ..., otherwise), one_if(test)";
  const Case cases[] = {
      {"lower({/a}, {/b})", "!! column 1: lower() with 2 arguments; expected lower(s)"},
      {"1 + substr({/a})", "!! column 5: substr() with 1 argument; expected substr(s, start[, count])"},
      {"has()", "!! column 1: has() with 0 arguments; expected has(x)"},
      {"coalesce()", "!! column 1: coalesce() with 0 arguments; expected coalesce(a, b, ...) with 1 "
                     "to 16 arguments"},
      {"coalesce(1,2,3,4,5,6,7,8,9,10,11,12,13,14,15,16,17)",
       "!! column 1: coalesce() with 17 arguments; expected coalesce(a, b, ...) with 1 to 16 "
       "arguments"},
      {"period_start({/ts}, {/unit})", "!! column 21: a unit that is not a string literal; expected "
                                       "one of 'minute', 'hour', 'day', 'week', 'month'"},
      {"period_start({/ts}, 'year')", "!! column 21: unit 'year'; expected one of 'minute', 'hour', "
                                      "'day', 'week', 'month'"},
      {"period_start({/ts}, 'Hour')", "!! column 21: unit 'Hour' (did you mean 'hour'?); expected one of 'minute', 'hour', "
                                      "'day', 'week', 'month'"},
      {"{/note} == null", "!! column 12: comparison with null, which is always false; expected "
                          "has(x) or lacks(x) to test for null or missing values"},
      {"{/event} in ['x', null]", "!! column 19: null in a list, which never matches; expected "
                                  "has(x) or lacks(x) to test for null or missing values"},
      {"{/a} > lamp_count", "!! column 8: unknown derived field 'lamp_count'; derived fields must "
                            "be defined earlier in \"derive\""},
      {"lower", "!! column 1: unknown derived field 'lower'; derived fields must be defined "
                "earlier in \"derive\""},
  };
  for (const Case& c : cases) {
    const std::string text = c.text;
    CAPTURE(text);
    CHECK(Eval(text) == c.expected);
  }
  CHECK(Eval("lowr({/lamp})") == "!! column 1: unknown function 'lowr' (did you mean lower()?); expected one of " + all);
  CHECK(Eval("{/a} or Lower({/a})") ==
        "!! column 9: unknown function 'Lower' (did you mean lower()?); expected one of " + all);
  // Syntax errors come through Compile unchanged.
  CHECK(Eval("{/a} == ") == "!! column 9: end of expression; expected an operand: a number, "
                            "string, {field}, name, function call or '('");
}

// Intent: {field} texts are interned once each, exactly as written after
// unescaping; text() returns the source.
TEST_CASE("field interning and text()") {
  FieldTable fields;
  Result<Expr> e = Expr::Compile("{/power_w} + {/power_w} + {a\\}b\\\\c} + {status}", &fields);
  REQUIRE(e.ok());
  REQUIRE(fields.size() == 3);
  CHECK(fields.slot(0).name == "/power_w");
  CHECK(fields.slot(1).name == "a}b\\c");
  CHECK(fields.slot(2).name == "status");
  CHECK_FALSE(fields.slot(0).derived);
  CHECK(e->text() == "{/power_w} + {/power_w} + {a\\}b\\\\c} + {status}");
}

// Intent: constant subexpressions are computed once and their strings stay
// valid after the arena is reset; a moved Expr still evaluates.
TEST_CASE("constants and moves") {
  FieldTable fields;
  Result<Expr> r = Expr::Compile("lower('NW-') + 1", &fields);
  REQUIRE(r.ok());
  Result<Expr> c = Expr::Compile("upper('nw') == upper({/z}) or period_start(0, 'day')", &fields);
  REQUIRE(c.ok());
  Result<Expr> s = Expr::Compile("lower('NW-00') ", &fields);
  REQUIRE(s.ok());
  ScratchArena arena;
  std::vector<Value> slots(fields.size());
  CHECK(Show(r->Eval(slots.data(), &arena)) == "missing");
  CHECK(Show(c->Eval(slots.data(), &arena)) == "true");  // '1970-01-01' is truthy
  Value v = s->Eval(slots.data(), &arena);
  arena.Reset();
  CHECK(Show(v) == "'nw-00'");

  Expr moved = std::move(s.value());
  CHECK(moved.text() == "lower('NW-00') ");
  CHECK(Show(moved.Eval(slots.data(), &arena)) == "'nw-00'");
  Expr assigned = std::move(moved);
  assigned = std::move(r.value());
  CHECK(assigned.text() == "lower('NW-') + 1");
}

// Intent: evaluating a compiled expression over many records allocates
// nothing on the heap once the arena is warm, so memory does not grow.
TEST_CASE("evaluation does not allocate") {
  FieldTable fields;
  Result<Expr> e = Expr::Compile(
      // Local time over four years of New York transitions and 45 of Berlin's
      // (past 2037 too): the zone lookups a changing offset needs allocate
      // nothing either.
      "period_start(1772719629 + ({/epoch_ms} - 1772719629250) * 600, '15 minutes', "
      "'America/New_York') == 'x' or "
      "clock_hour(1772719629 + ({/epoch_ms} - 1772719629250) * 7200, 'Europe/Berlin') == 99 or "
      "(lower({/event}) in ['fault', 'reboot'] and {/power_w} * 2 > {/latency_ms})"
      " or contains(upper({/district}), 'NORTH') or period_start({/ts}, 'week') == '2026-W10'"
      " or text({/power_w}) == '3' or substr({/power_w}, 1) == 'x'"
      " or coalesce({/absent}, {/note}, {/lamp}) == 'x' or weekday(time({/ts})) == 9"
      " or bucket_start(time_ms({/epoch_ms}), 3600) < 0"
      " or branch({/power_w} > 1, lower({/event}), upper({/lamp})) == 'x' or one_if({/note}) > 1",
      &fields);
  REQUIRE(e.ok());
  std::vector<Value> slots(fields.size());
  auto fill = [&](int i) {
    for (size_t s = 0; s < fields.size(); ++s) slots[s] = Value::Missing();
    slots[fields.InternField("/event")] = S(i % 2 ? "FAULT" : "Ok");
    slots[fields.InternField("/power_w")] = N(i * 0.5);
    slots[fields.InternField("/latency_ms")] = S("120");
    slots[fields.InternField("/district")] = S(i % 3 ? "Northwick" : "eastgate");
    slots[fields.InternField("/ts")] = S("2026-03-05T14:07:09.250+01:00");
    slots[fields.InternField("/lamp")] = S("NW-0042");
    slots[fields.InternField("/epoch_ms")] = N(1772719629250.0 + i);
  };
  ScratchArena arena;
  fill(1);
  (void)e->Eval(slots.data(), &arena);  // warm-up: the arena takes its first block
  arena.Reset();
  long trues = 0;
  long allocations;
  {
    CountAllocations counter;
    for (int i = 0; i < 200000; ++i) {
      fill(i);
      trues += e->Eval(slots.data(), &arena).Truthy();
      arena.Reset();
    }
    allocations = counter.count();
  }
  CHECK(allocations == 0);
  CHECK(trues == 200000);  // the week label always matches
}

// Intent: random token soups never crash the compiler or the evaluator;
// every rejection carries a column inside the text (or just past its end).
TEST_CASE("random expressions compile or fail cleanly") {
  const char* pieces[] = {
      "{/a}", "{/b}", "{c}", "zone", "1", "-2.5", ".5", "1e3", "'x'", "\"NW\"", "''", "true",
      "false", "null", "and", "or", "not", "in", "==", "!=", "<", "<=", ">", ">=", "+", "-", "*",
      "/", "%", "(", ")", "[", "]", ",", "lower(", "substr(", "coalesce(", "period_start(", "'day'",
      "branch(", "one_if(",
      "time(", "has(", "bucket_start(", "text(", "weekday(", "{", "}", "'", "\\", "@", " ", "nope(",
  };
  const int kPieces = sizeof pieces / sizeof pieces[0];
  uint64_t state = 0x9e3779b97f4a7c15ull;  // fixed seed: failures reproduce
  auto next = [&] {
    state ^= state << 13;
    state ^= state >> 7;
    state ^= state << 17;
    return state;
  };
  const Value samples[] = {Value::Missing(), Value::Null(), N(0), N(-3.5), N(1772719629),
                           S(""), S("12"), S("NW-0042"), S("2026-03-05T14:07Z"), B(true),
                           Value::Other()};
  int compiled = 0;
  for (int round = 0; round < 20000; ++round) {
    std::string text;
    const int n = 1 + static_cast<int>(next() % 12);
    for (int i = 0; i < n; ++i) {
      text += pieces[next() % kPieces];
      if (next() % 2) text += ' ';
    }
    FieldTable fields;
    fields.AddDerived("zone");
    Result<Expr> e = Expr::Compile(text, &fields);
    if (!e.ok()) {
      const std::string& m = e.status().message();
      CAPTURE(text);
      CAPTURE(m);
      REQUIRE(m.rfind("column ", 0) == 0);
      const int column = std::atoi(m.c_str() + 7);
      CHECK(column >= 1);
      CHECK(column <= static_cast<int>(text.size()) + 1);
      CHECK(m.find("; ") != std::string::npos);
      continue;
    }
    ++compiled;
    std::vector<Value> slots(fields.size());
    ScratchArena arena;
    for (int r = 0; r < 4; ++r) {
      for (Value& v : slots) v = samples[next() % (sizeof samples / sizeof samples[0])];
      (void)e->Eval(slots.data(), &arena);
      arena.Reset();
    }
  }
  CHECK(compiled > 100);  // the soup does reach the evaluator
}

// Intent: the allocation counter itself works (else the test above proves
// nothing).
TEST_CASE("allocation counter sees allocations") {
  long allocations;
  {
    CountAllocations counter;
    auto* p = new std::string(100, 'x');
    delete p;
    allocations = counter.count();
  }
  CHECK(allocations >= 1);
}

}  // namespace fanfold
