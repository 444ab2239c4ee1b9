// Tests for the evaluator's fast paths (common/expr/program.h: kTextEq,
// kEpoch, kClockField, kSubstrFixed): the compiler picks them for the
// shapes they cover, and on every kind of value they give what the general
// ops give — the same expression with its constants read from fields
// (which keeps the general comparison and substr), and ApplyExprFunction
// itself for the time functions. The general ops are checked against the
// outside references in eval_test.cc, functions_test.cc and
// time_functions_test.cc.
#include <doctest/doctest.h>

#include <cmath>
#include <limits>
#include <string>
#include <vector>

#include "common/expr/compiler.h"
#include "common/expr/expr.h"
#include "common/expr/functions.h"
#include "common/expr/parser.h"
#include "common/expr/program.h"
#include "tests/expr/expr_test_util.h"

namespace fanfold {
namespace {

using expr_testing::Show;

// Values of every kind, and texts each fast path treats specially.
std::vector<Value> Probes() {
  return {Value::Missing(),
          Value::Null(),
          Value::Bool(true),
          Value::Bool(false),
          Value::Other(),
          Value::Int(0),
          Value::Int(12),
          Value::Int(1772323200122),
          Value::Uint(18446744073709551615ULL),
          Value::Number(-3.5),
          Value::Number(1e300),
          Value::Number(std::numeric_limits<double>::quiet_NaN()),
          Value::Number(std::numeric_limits<double>::infinity()),
          Value::String(""),
          Value::String("reboot"),
          Value::String("Reboot"),
          Value::String("reboot "),
          Value::String("12"),
          Value::String("1772323200122"),
          Value::String("2026-03-01T00:00:00.004Z"),
          Value::String("2026-03-01T23:59:59+05:30"),
          Value::String("2026-02-30T00:00:00Z"),
          Value::String("L-24806"),
          Value::String("\xC3\xA9t\xC3\xA9")};
}

// The op of a compiled expression's root node.
ExprOp RootOp(const std::string& text) {
  Result<AstNode> ast = ParseExpr(text);
  REQUIRE(ast.ok());
  FieldTable fields;
  Expr::Program p;
  REQUIRE(CompileExprAst(ast.value(), &fields, &p).ok());
  return p.nodes.back().op;
}

// The value of a literal as written in the spans below: 'text' or a number.
Value Literal(const std::string& text) {
  if (text.front() == '\'') return Value::String(std::string_view(text).substr(1, text.size() - 2));
  return Value::Number(std::stod(text));
}

// Evaluates `text` with {x} = x and every other field given.
std::string EvalWith(const std::string& text, const Value& x, const expr_testing::Record& more = {}) {
  expr_testing::Record r = {{"x", x}};
  r.insert(r.end(), more.begin(), more.end());
  return expr_testing::Eval(text, r);
}

}  // namespace

TEST_CASE("the compiler picks the fast paths for their shapes only") {
  CHECK(RootOp("{x} != 'reboot'") == ExprOp::kTextEq);
  CHECK(RootOp("'reboot' == {x}") == ExprOp::kTextEq);
  CHECK(RootOp("{x} == '12'") == ExprOp::kCompareConst);  // numeric text compares as a number
  CHECK(RootOp("{x} < 'reboot'") == ExprOp::kCompareConst);
  CHECK(RootOp("{x} == 12") == ExprOp::kCompareConst);
  CHECK(RootOp("time({x})") == ExprOp::kEpoch);
  CHECK(RootOp("time_ms({x})") == ExprOp::kEpoch);
  CHECK(RootOp("clock_hour({x})") == ExprOp::kClockField);
  CHECK(RootOp("weekday({x}, 'Europe/Paris')") == ExprOp::kClockField);
  CHECK(RootOp("substr({x}, 0, 4)") == ExprOp::kSubstrFixed);
  CHECK(RootOp("substr({x}, 2)") == ExprOp::kSubstrFixed);
  CHECK(RootOp("substr({x}, {a}, 4)") == ExprOp::kCall);
  CHECK(RootOp("substr({x}, 'a', 4)") == ExprOp::kCall);  // not a number: always missing, the general way
  CHECK(RootOp("substr('abc', 0, 2)") == ExprOp::kConst);  // folded before any fast path
}

TEST_CASE("text comparison fast path equals the general comparison") {
  for (const Value& x : Probes()) {
    CAPTURE(Show(x));
    for (const char* text : {"reboot", "", "Reboot", "\xC3\xA9t\xC3\xA9", "true"}) {
      CAPTURE(text);
      const std::string c = std::string("'") + text + "'";
      const expr_testing::Record k = {{"k", Value::String(text)}};
      CHECK(EvalWith("{x} == " + c, x) == EvalWith("{x} == {k}", x, k));
      CHECK(EvalWith("{x} != " + c, x) == EvalWith("{x} != {k}", x, k));
      CHECK(EvalWith(c + " != {x}", x) == EvalWith("{k} != {x}", x, k));
    }
  }
}

TEST_CASE("substr fast path equals the general substr") {
  const std::vector<std::pair<std::string, std::string>> spans = {
      {"0", "4"}, {"2", ""}, {"-2", "3"}, {"1.7", "2.9"}, {"0", "100"}, {"'1'", "'2'"}, {"5", "-1"}, {"1e300", "1"}};
  for (const Value& x : Probes()) {
    CAPTURE(Show(x));
    for (const auto& [start, count] : spans) {
      CAPTURE(start);
      CAPTURE(count);
      const std::string fast = "substr({x}, " + start + (count.empty() ? "" : ", " + count) + ")";
      const std::string general = "substr({x}, {s}" + std::string(count.empty() ? "" : ", {c}") + ")";
      const expr_testing::Record sc = {{"s", Literal(start)},
                                       {"c", count.empty() ? Value::Missing() : Literal(count)}};
      CHECK(EvalWith(fast, x) == EvalWith(general, x, sc));
    }
  }
}

TEST_CASE("time fast paths equal ApplyExprFunction") {
  ScratchArena arena;
  TimeBucket utc;
  for (const Value& x : Probes()) {
    CAPTURE(Show(x));
    CHECK(EvalWith("time({x})", x) == Show(ApplyExprFunction(ExprFunction::kTime, &x, 1, utc, &arena)));
    CHECK(EvalWith("time_ms({x})", x) == Show(ApplyExprFunction(ExprFunction::kTimeMs, &x, 1, utc, &arena)));
    CHECK(EvalWith("clock_hour({x})", x) == Show(ApplyExprFunction(ExprFunction::kClockHour, &x, 1, utc, &arena)));
    CHECK(EvalWith("weekday({x})", x) == Show(ApplyExprFunction(ExprFunction::kWeekday, &x, 1, utc, &arena)));
  }
}

}  // namespace fanfold
