// Tests for the conditional functions (common/expr/conditional_functions.h):
// branch() and one_if() evaluated on the demo record — each form, missing and
// null tests and values, exact integers, mixed kinds, nesting — with the
// Python 3 expression that gives the same value beside each check (None for
// missing and null, bool(x) for the language's truthiness), laziness, and the
// compile-time errors.
#include "common/expr/conditional_functions.h"

#include <doctest/doctest.h>

#include <string>
#include <utility>
#include <vector>

#include "tests/expr/expr_test_util.h"

namespace fanfold {
namespace {

using expr_testing::B;
using expr_testing::CheckAll;
using expr_testing::Eval;
using expr_testing::kLamp;
using expr_testing::N;
using expr_testing::S;

// Intent: branch() gives the value of the first test that holds, else the
// otherwise value; a missing or null test does not hold. The reference is
// Python's conditional expression `v1 if c1 else v2 if c2 else d`, with the
// record's values written in (event 'FAULT', power_w 61.5, dimmed True).
TEST_CASE("branch picks the first test that holds") {
  CheckAll({
      {"branch({/event} == 'FAULT', 'bad', 'ok')", "'bad'"},  // 'bad' if 'FAULT' == 'FAULT' else 'ok'
      {"branch({/event} == 'OK', 'good', 'other')", "'other'"},  // 'good' if 'FAULT' == 'OK' else 'other'
      {"branch({/power_w} > 100, 'high', {/power_w} > 60, 'mid', 'low')",
       "'mid'"},  // 'high' if 61.5 > 100 else 'mid' if 61.5 > 60 else 'low'
      {"branch({/power_w} > 100, 'high', {/power_w} > 70, 'mid', 'low')",
       "'low'"},  // 'high' if 61.5 > 100 else 'mid' if 61.5 > 70 else 'low'
      {"branch(true, 1, true, 2, 3)", "1"},             // 1 if True else 2 if True else 3
      {"branch(false, 1, true, 2, 3)", "2"},            // 1 if False else 2 if True else 3
      {"branch({/absent}, 1, 0)", "0"},                 // 1 if None else 0
      {"branch({/note}, 1, 0)", "0"},                   // 1 if None else 0 (JSON null)
      {"branch({/absent} > 1, 1, {/note} != 2, 2, 3)", "3"},  // comparisons with None are False here
      {"branch(not {/absent}, 'no fault', 'fault')", "'no fault'"},  // 'no fault' if not None else 'fault'
      {"branch({/lamp}, 1, 0)", "1"},                   // 1 if 'NW-0042' else 0
      {"branch({/empty}, 1, 0)", "0"},                  // 1 if '' else 0
      {"branch({/latency_ms}, 1, 0)", "1"},             // 1 if '120' else 0 (non-empty text)
      {"branch({/readings}, 1, 0)", "1"},               // 1 if [4.4, 84] else 0
      {"branch(0, 1, 2)", "2"},                         // 1 if 0 else 2
      {"branch(-0.5, 1, 2)", "1"},                      // 1 if -0.5 else 2
  }, kLamp);
}

// Intent: the chosen value comes back unchanged: missing stays missing (no
// falling through to the next test), null stays null, integers stay exact
// and no kind is converted to another's.
TEST_CASE("branch values keep their kind and exactness") {
  CheckAll({
      {"branch(true, {/absent}, 0)", "missing"},         // None if True else 0
      {"branch({/dimmed}, {/note}, 1)", "null"},         // None if True else 1
      {"branch(false, 1, {/absent})", "missing"},        // 1 if False else None
      {"branch({/dimmed}, 9007199254740993, 0.5)", "9007199254740993"},  // 9007199254740993 if True else 0.5
      {"branch({/dimmed}, 18446744073709551615, -1)",
       "18446744073709551615"},                           // 18446744073709551615 if True else -1
      {"branch({/dimmed}, -9223372036854775808, 0)",
       "-9223372036854775808"},                           // -9223372036854775808 if True else 0
      {"branch(false, 1, 0.5)", "0.5"},                  // 1 if False else 0.5
      {"branch({/dimmed}, 2, 0.5) + 9007199254740991", "9007199254740993"},  // (2 if True else 0.5) + 9007199254740991
      {"branch(not {/dimmed}, 2, 0.5) + 9007199254740991",
       "9007199254740992"},                               // float(0.5 + 9007199254740991) == 9007199254740992.0
      {"branch({/dimmed}, 'on', 0)", "'on'"},            // 'on' if True else 0
      {"branch(not {/dimmed}, 'on', 0)", "0"},           // 'on' if False else 0
      {"branch({/dimmed}, {/latency_ms}, 0)", "'120'"},  // text stays text
      {"branch({/dimmed}, {/latency_ms}, 0) + 1", "121"},  // 120 + 1: arithmetic reads its numeric view
      {"branch({/dimmed}, {/power_w} > 60, 'n/a')", "true"},  // 61.5 > 60 if True else 'n/a'
      {"branch({/event} == 'FAULT', {/power_w}, 0) * 2", "123"},  // (61.5 if 'FAULT' == 'FAULT' else 0) * 2
  }, kLamp);
}

// Intent: branches nest, as tests and as values, and compose with the other
// operators and functions.
TEST_CASE("branch nests") {
  CheckAll({
      {"branch({/power_w} > 60, branch({/dimmed}, 'hot-dim', 'hot'), 'cool')",
       "'hot-dim'"},  // ('hot-dim' if True else 'hot') if 61.5 > 60 else 'cool'
      {"branch({/power_w} > 70, 'very hot', branch({/dimmed}, 'dim', 'lit'))",
       "'dim'"},      // 'very hot' if 61.5 > 70 else ('dim' if True else 'lit')
      {"branch(branch({/dimmed}, false, true), 1, 2)", "2"},  // 1 if (False if True else True) else 2
      {"lower(branch(has({/fault}), {/fault}, {/district}))", "'northwick'"},  // 'Northwick'.lower()
      {"branch({/event} in ['FAULT', 'REBOOT'], 'trouble', 'fine')", "'trouble'"},
      {"len(branch({/dimmed}, {/lamp}, ''))", "7"},       // len('NW-0042')
      {"branch(1 > 2, 'a', 'b')", "'b'"},                 // folded at compile time: 'a' if 1 > 2 else 'b'
  }, kLamp);
}

// Intent: one_if() turns the language's truthiness into the integers 1 and 0
// (Python: int(bool(x)), with None for missing and null), never missing, so
// that a sum of one_if counts the records where a test holds.
TEST_CASE("one_if gives 1 or 0") {
  CheckAll({
      {"one_if({/event} == 'FAULT')", "1"},             // int('FAULT' == 'FAULT')
      {"one_if({/power_w} > 100)", "0"},                // int(61.5 > 100)
      {"one_if({/absent})", "0"},                       // int(bool(None))
      {"one_if({/note})", "0"},                         // int(bool(None))
      {"one_if({/absent} > 1)", "0"},                   // a comparison with missing is false
      {"one_if(lacks({/absent}))", "1"},                // int(True)
      {"one_if({/lamp})", "1"},                         // int(bool('NW-0042'))
      {"one_if({/empty})", "0"},                        // int(bool(''))
      {"one_if(0)", "0"},                               // int(bool(0))
      {"one_if(-0.5)", "1"},                            // int(bool(-0.5))
      {"one_if({/readings})", "1"},                     // int(bool([4.4, 84]))
      {"one_if(true) + one_if(true)", "2"},             // int(True) + int(True)
      {"one_if({/dimmed}) * 9007199254740993", "9007199254740993"},  // int(True) * 9007199254740993, exact
      {"one_if({/dimmed}) - 1", "0"},                   // an integer, not a bool
      {"one_if({/power_w} > 60 and {/dimmed})", "1"},   // int(61.5 > 60 and True)
      {"text(one_if({/dimmed}))", "'1'"},               // str(int(True))
  }, kLamp);
}

// Intent: branch() is lazy: tests run left to right until one holds, and
// only that test's value is evaluated (or only the otherwise value when none
// holds), so costly or missing-prone values elsewhere cost nothing.
TEST_CASE("branch evaluates only what it needs") {
  const std::vector<Value> args = {B(false), S("a"), Value::Missing(), S("b"), N(1), S("c"), S("d")};
  std::vector<int> seen;
  auto eval = [&](int k) {
    seen.push_back(k);
    return args[k];
  };
  CHECK(expr_testing::Show(EvalBranch(7, eval)) == "'c'");
  CHECK(seen == std::vector<int>{0, 2, 4, 5});
  seen.clear();
  CHECK(expr_testing::Show(EvalBranch(3, eval)) == "missing");  // args 0..2: false, 'a', then missing
  CHECK(seen == std::vector<int>{0, 2});
  const std::vector<Value> none = {B(false), S("a"), Value::Null(), S("b"), S("otherwise")};
  seen.clear();
  CHECK(expr_testing::Show(EvalBranch(5, [&](int k) { seen.push_back(k); return none[k]; })) ==
        "'otherwise'");
  CHECK(seen == std::vector<int>{0, 2, 4});
}

// Intent: every field a branch mentions is read, whichever branch a record
// takes, so the worker fetches them all.
TEST_CASE("branch reads the fields of every argument") {
  FieldTable fields;
  Result<Expr> e = Expr::Compile("branch({/a} > 1, {/b}, {/c}, {/d}, {/e})", &fields);
  REQUIRE(e.ok());
  CHECK(e->SlotsRead().size() == 5);
}

// Intent: malformed calls fail at compile time, in our words, with the
// column of the call or of the offending argument.
TEST_CASE("conditional compile errors") {
  const std::string shape =
      "expected branch(test, value, ..., otherwise): pairs of a test and its value, then the value "
      "when no test holds (an odd number of arguments, 3 to 65)";
  std::string many = "branch(";
  for (int i = 0; i < 67; ++i) many += i ? ", 1" : "1";
  many += ")";
  const std::pair<std::string, std::string> cases[] = {
      {"branch({/a} > 1, 1)", "!! column 18: branch() with 2 arguments, so no otherwise value after the "
                              "last test's value; " + shape},
      {"branch({/a}, 1, {/b}, 2)", "!! column 23: branch() with 4 arguments, so no otherwise value after "
                                   "the last test's value; " + shape},
      {"1 + branch({/a})", "!! column 5: branch() with 1 argument; " + shape},
      {"branch()", "!! column 1: branch() with 0 arguments; " + shape},
      {many, "!! column 1: branch() with 67 arguments; " + shape},
      {"branch(null, 1, 0)", "!! column 8: a test that is null, which never holds; expected a condition "
                             "such as has(x) or x > 0"},
      {"branch({/a}, 1, null, 2, 3)", "!! column 17: a test that is null, which never holds; expected a "
                                      "condition such as has(x) or x > 0"},
      {"one_if()", "!! column 1: one_if() with 0 arguments; expected one_if(test)"},
      {"one_if({/a}, {/b})", "!! column 1: one_if() with 2 arguments; expected one_if(test)"},
  };
  for (const auto& [text, expected] : cases) {
    CAPTURE(text);
    CHECK(Eval(text) == expected);
  }
  CHECK(Eval("branch({/a}, null, 0)").rfind("!!", 0) != 0);  // null as a value is fine
  const std::string brnch = Eval("brnch({/a}, 1, 0)");
  CHECK(brnch.rfind("!! column 1: unknown function 'brnch' (did you mean branch()?); expected one of ", 0) == 0);
  const std::string oneif = Eval("oneif({/a} > 1)");
  CHECK(oneif.rfind("!! column 1: unknown function 'oneif' (did you mean one_if()?); expected one of ", 0) == 0);
}

}  // namespace
}  // namespace fanfold
