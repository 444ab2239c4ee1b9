// Tests for common/base/value_compare: the comparison rules of the expression
// language, and that the constant fast path always agrees with them.
#include "common/base/value_compare.h"

#include <doctest/doctest.h>

#include <cmath>

#include <vector>

namespace fanfold {
namespace {

std::vector<Value> Samples() {
  return {Value::Missing(), Value::Null(),       Value::Bool(false),  Value::Bool(true),
          Value::Number(0), Value::Number(-0.0), Value::Number(12),   Value::Number(12.5),
          Value::String(""), Value::String("12"), Value::String("12.0"), Value::String("+12"),
          Value::String("abc"), Value::String("abd"), Value::String("Abc"), Value::String("nan"),
          Value::String("\xc3\xa9"), Value::Other()};
}

constexpr CompareOp kOps[] = {CompareOp::kEq, CompareOp::kNe, CompareOp::kLt,
                              CompareOp::kLe, CompareOp::kGt, CompareOp::kGe};

}  // namespace

// Intent: spot checks of each rule in docs/expressions.md.
TEST_CASE("CompareValues rules") {
  const Value n12 = Value::Number(12), s12 = Value::String("12"), s120 = Value::String("12.0");
  CHECK(CompareValues(CompareOp::kEq, n12, s12));          // numeric text is numeric
  CHECK(CompareValues(CompareOp::kEq, s12, s120));         // both numeric: as numbers
  CHECK(CompareValues(CompareOp::kLt, Value::String("9"), Value::String("10")));
  CHECK(CompareValues(CompareOp::kLt, Value::String("9a"), Value::String("10a")) == false);
  CHECK(CompareValues(CompareOp::kGt, Value::String("\xc3\xa9"), Value::String("z")));  // unsigned bytes
  CHECK(CompareValues(CompareOp::kNe, Value::Bool(true), n12));
  CHECK_FALSE(CompareValues(CompareOp::kEq, Value::Bool(true), Value::Number(1)));
  CHECK_FALSE(CompareValues(CompareOp::kLt, Value::Bool(false), Value::Bool(true)));
  CHECK_FALSE(CompareValues(CompareOp::kNe, Value::Missing(), n12));
  CHECK_FALSE(CompareValues(CompareOp::kNe, n12, Value::Null()));
  CHECK(CompareValues(CompareOp::kEq, Value::Number(0), Value::Number(-0.0)));  // IEEE 754
  // "nan" text is not numeric (Value::AsNumber takes finite numbers only), so it
  // compares as text; NaN numbers follow IEEE 754, where only != holds.
  CHECK(CompareValues(CompareOp::kEq, Value::String("nan"), Value::String("nan")));
  CHECK(CompareValues(CompareOp::kLt, Value::String("inf"), Value::String("nan")));
  CHECK(CompareValues(CompareOp::kNe, Value::Number(NAN), Value::Number(NAN)));
  CHECK_FALSE(CompareValues(CompareOp::kEq, Value::Number(NAN), Value::Number(NAN)));
}

// Intent: mirroring an op and swapping operands never changes the answer,
// and the constant fast path equals the general rule on every pair.
TEST_CASE("CompareToConstant and MirrorCompareOp agree with CompareValues") {
  const std::vector<Value> values = Samples();
  for (const Value& l : values) {
    for (const Value& r : values) {
      const CompareConstant c = MakeCompareConstant(r);
      for (CompareOp op : kOps) {
        const bool expected = CompareValues(op, l, r);
        CHECK(CompareToConstant(op, l, c) == expected);
        CHECK(CompareValues(MirrorCompareOp(op), r, l) == expected);
      }
    }
  }
}

}  // namespace fanfold

namespace fanfold {
namespace {

// Intent: integer text reads exactly where Python's int() does, and falls back to the double beyond 64 bits.
TEST_CASE("Value::AsNumeric keeps integer text exact") {
  Value v;
  REQUIRE(Value::String("9007199254740993").AsNumeric(&v));
  CHECK(v.is_integer());
  CHECK(v.Wide() == 9007199254740993);  // Python: int("9007199254740993")
  REQUIRE(Value::String("18446744073709551615").AsNumeric(&v));
  CHECK(v.rep == NumberRep::kUint64);
  CHECK(v.bits == UINT64_MAX);
  REQUIRE(Value::String("-9223372036854775808").AsNumeric(&v));
  CHECK(v.rep == NumberRep::kInt64);
  CHECK(v.Wide() == INT64_MIN);
  REQUIRE(Value::String("+42").AsNumeric(&v));
  CHECK(v.Wide() == 42);
  REQUIRE(Value::String("-9223372036854775809").AsNumeric(&v));  // below int64: the double
  CHECK_FALSE(v.is_integer());
  CHECK(v.number == -9223372036854775809.0);
  REQUIRE(Value::String("12.5").AsNumeric(&v));
  CHECK_FALSE(v.is_integer());
  CHECK(v.number == 12.5);
  CHECK_FALSE(Value::String("12x").AsNumeric(&v));
  CHECK_FALSE(Value::String("-").AsNumeric(&v));
}

// Intent: wide results beyond 64 bits become the nearest double; inside they stay exact.
TEST_CASE("Value::FromWide canonicalises") {
  CHECK(Value::FromWide(static_cast<WideInt>(INT64_MAX) + 1).rep == NumberRep::kUint64);
  CHECK(Value::FromWide(5).rep == NumberRep::kInt64);
  const Value beyond = Value::FromWide(static_cast<WideInt>(UINT64_MAX) + 1);
  CHECK_FALSE(beyond.is_integer());
  CHECK(beyond.number == 18446744073709551616.0);  // 2^64 exactly
  CHECK(Value::Uint(7).rep == NumberRep::kInt64);
}

}  // namespace
}  // namespace fanfold
