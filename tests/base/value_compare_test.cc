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
          Value::String("\xc3\xa9"), Value::Other(),
          // Integers next to the doubles they round to, and their texts.
          Value::Int(12), Value::Int(INT64_MIN), Value::Uint(UINT64_MAX),
          Value::Int(9007199254740993), Value::Number(9007199254740992.0),
          Value::Number(18446744073709551616.0), Value::Number(NAN),
          Value::String("9007199254740993"), Value::String("18446744073709551615"),
          Value::String("-9223372036854775808")};
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
  // Around 19 digits (the one-pass read) and 20 (from_chars): Python's int() and float().
  REQUIRE(Value::String("9999999999999999999").AsNumeric(&v));
  CHECK(v.rep == NumberRep::kUint64);
  CHECK(v.bits == 9999999999999999999ULL);  // Python: int("9999999999999999999")
  REQUIRE(Value::String("-999999999999999999").AsNumeric(&v));
  CHECK(v.Wide() == -999999999999999999);  // Python: int("-999999999999999999")
  REQUIRE(Value::String("00012").AsNumeric(&v));
  CHECK(v.Wide() == 12);  // Python: int("00012") == 12
  REQUIRE(Value::String("18446744073709551616").AsNumeric(&v));  // 2^64: the double
  CHECK_FALSE(v.is_integer());
  CHECK(v.number == 18446744073709551616.0);  // Python: float("18446744073709551616")
  REQUIRE(Value::String("00000000000000000000000042").AsNumeric(&v));
  CHECK(v.Wide() == 42);  // Python: int("00000000000000000000000042") == 42
  REQUIRE(Value::String("1234567890123456789.5").AsNumeric(&v));
  CHECK_FALSE(v.is_integer());
  CHECK(v.number == 1234567890123456789.5);  // Python: float("1234567890123456789.5")
  CHECK_FALSE(Value::String("1234567890123456789x").AsNumeric(&v));
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

namespace fanfold {
namespace {

// Intent: integers compare exactly with integers and with doubles, as Python compares int and float.
TEST_CASE("CompareValues is exact for integers") {
  const Value i2p53p1 = Value::Int(9007199254740993);
  const Value d2p53 = Value::Number(9007199254740992.0);
  CHECK(CompareValues(CompareOp::kGt, i2p53p1, d2p53));  // Python: 9007199254740993 > 9007199254740992.0 is True
  CHECK(CompareValues(CompareOp::kNe, i2p53p1, d2p53));  // Python: 9007199254740993 != 9007199254740992.0 is True
  CHECK(CompareValues(CompareOp::kLt, d2p53, i2p53p1));  // Python: 9007199254740992.0 < 9007199254740993 is True
  CHECK(CompareValues(CompareOp::kEq, Value::Int(9007199254740992), d2p53));  // Python: 2**53 == 2.0**53 is True
  CHECK(CompareValues(CompareOp::kNe, Value::Int(9007199254740992), i2p53p1));  // Python: 2**53 != 2**53 + 1
  const Value umax = Value::Uint(UINT64_MAX);
  const Value d2p64 = Value::Number(18446744073709551616.0);
  CHECK(CompareValues(CompareOp::kLt, umax, d2p64));  // Python: 2**64 - 1 < 2.0**64 is True
  CHECK_FALSE(CompareValues(CompareOp::kEq, umax, Value::Number(static_cast<double>(UINT64_MAX))));  // Python: 2**64 - 1 == float(2**64 - 1) is False
  CHECK(CompareValues(CompareOp::kGt, umax, Value::Int(INT64_MAX)));  // Python: 2**64 - 1 > 2**63 - 1
  CHECK(CompareValues(CompareOp::kLt, Value::Int(INT64_MIN), Value::Int(INT64_MIN + 1)));  // Python: -2**63 < -2**63 + 1
  CHECK(CompareValues(CompareOp::kEq, Value::Int(INT64_MIN), Value::Number(-9223372036854775808.0)));  // Python: -2**63 == -2.0**63
  CHECK(CompareValues(CompareOp::kGt, Value::Int(INT64_MIN), Value::Number(-9223372036854777856.0)));  // Python: -2**63 > -9223372036854777856.0 (next double below)
  CHECK(CompareValues(CompareOp::kLt, Value::Int(3), Value::Number(3.5)));   // Python: 3 < 3.5
  CHECK(CompareValues(CompareOp::kGt, Value::Int(-3), Value::Number(-3.5)));  // Python: -3 > -3.5
  CHECK(CompareValues(CompareOp::kLt, Value::Int(-4), Value::Number(-3.5)));  // Python: -4 < -3.5
  CHECK(CompareValues(CompareOp::kLt, umax, Value::Number(INFINITY)));   // Python: 2**64 - 1 < float('inf')
  CHECK(CompareValues(CompareOp::kGt, Value::Int(INT64_MIN), Value::Number(-INFINITY)));  // Python: -2**63 > float('-inf')
  CHECK_FALSE(CompareValues(CompareOp::kEq, Value::Int(0), Value::Number(NAN)));  // Python: 0 == float('nan') is False
  CHECK(CompareValues(CompareOp::kNe, Value::Int(0), Value::Number(NAN)));  // Python: 0 != float('nan') is True
  // Numeric text reads exactly (Value::AsNumeric).
  CHECK(CompareValues(CompareOp::kGt, Value::String("9007199254740993"), d2p53));  // Python: int("9007199254740993") > 2.0**53
  CHECK(CompareValues(CompareOp::kLt, Value::String("9007199254740992"), Value::String("9007199254740993")));  // Python: int("9007199254740992") < int("9007199254740993")
  CHECK(CompareValues(CompareOp::kEq, Value::String("18446744073709551615"), umax));  // Python: int("18446744073709551615") == 2**64 - 1
}

// Intent: the integer-against-double order holds across the whole 128-bit range a sum can reach.
TEST_CASE("CompareWideToDouble at the edges") {
  const WideInt two100 = static_cast<WideInt>(1) << 100;
  CHECK(CompareWideToDouble(two100, 1267650600228229401496703205376.0) == 0);  // Python: 2**100 == 2.0**100
  CHECK(CompareWideToDouble(two100 + 1, 1267650600228229401496703205376.0) == 1);  // Python: 2**100 + 1 > 2.0**100
  CHECK(CompareWideToDouble(-two100 - 1, -1267650600228229401496703205376.0) == -1);  // Python: -2**100 - 1 < -2.0**100
  CHECK(CompareWideToDouble(0, 1e300) == -1);  // Python: 0 < 1e300
  CHECK(CompareWideToDouble(0, -1e300) == 1);  // Python: 0 > -1e300
  CHECK(CompareWideToDouble(0, NAN) == kUnordered);
  CHECK(CompareWideToDouble(0, -0.0) == 0);    // Python: 0 == -0.0
  CHECK(CompareWideToDouble(-1, -0.5) == -1);  // Python: -1 < -0.5
  CHECK(CompareWideToDouble(0, -0.5) == 1);    // Python: 0 > -0.5
}

}  // namespace
}  // namespace fanfold
