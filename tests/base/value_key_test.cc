// ValueKey: typed, canonical, order-preserving keys for counted values.
#include "common/base/value_key.h"

#include <doctest/doctest.h>

#include <cmath>
#include <limits>
#include <vector>

namespace fanfold {
namespace {

std::string Key(const Value& v) {
  std::string k;
  REQUIRE(MakeValueKey(v, &k));
  return k;
}

// Intent: keys separate types (1 vs "1" vs true), merge -0.0 with 0.0 and
// all NaNs, and refuse missing / null / objects.
TEST_CASE("value_key: typed and canonical") {
  CHECK(Key(Value::Number(1)) != Key(Value::String("1")));
  CHECK(Key(Value::Bool(true)) != Key(Value::Number(1)));
  CHECK(Key(Value::Number(-0.0)) == Key(Value::Number(0.0)));
  CHECK(Key(Value::Number(std::nan("1"))) == Key(Value::Number(-std::nan("2"))));
  CHECK(HashValueKey(Value::Number(-0.0)) == HashValueKey(Value::Number(0.0)));
  CHECK(HashValueKey(Value::Number(1)) != HashValueKey(Value::String("1")));
  std::string k;
  CHECK_FALSE(MakeValueKey(Value::Missing(), &k));
  CHECK_FALSE(MakeValueKey(Value::Null(), &k));
  CHECK_FALSE(MakeValueKey(Value::Other(), &k));
}

// Intent: bytewise key order is bools, then numbers numerically (negative,
// subnormal, infinite included), then strings bytewise.
TEST_CASE("value_key: order") {
  const double inf = std::numeric_limits<double>::infinity();
  const std::vector<Value> ascending = {
      Value::Bool(false), Value::Bool(true),  Value::Number(-inf),   Value::Number(-1e300),
      Value::Number(-1),  Value::Number(-5e-324), Value::Number(0),  Value::Number(5e-324),
      Value::Number(0.5), Value::Number(1),   Value::Number(1e300),  Value::Number(inf),
      Value::String(""),  Value::String("A"), Value::String("a"),    Value::String("\xc3\xa9")};
  for (size_t i = 0; i + 1 < ascending.size(); ++i) {
    INFO(i);
    CHECK(Key(ascending[i]) < Key(ascending[i + 1]));
  }
}

// Intent: every key round-trips to the cell of its value and validates;
// malformed keys do not.
TEST_CASE("value_key: cells and validation") {
  for (double d : {-2.5, 0.0, 1e-310, 7.0}) {
    const std::string k = Key(Value::Number(d));
    CHECK(IsValidValueKey(k));
    const Cell c = ValueKeyToCell(k);
    if (c.kind == Cell::Kind::kInt) CHECK(c.integer == static_cast<WideInt>(d));
    else CHECK(c.number == d);
  }
  CHECK(ValueKeyToCell(Key(Value::String("hi"))).str == "hi");
  CHECK(ValueKeyToCell(Key(Value::Bool(true))).boolean);
  CHECK_FALSE(IsValidValueKey(""));
  CHECK_FALSE(IsValidValueKey("n123"));                        // short number
  CHECK_FALSE(IsValidValueKey(Key(Value::Number(1)).substr(0, 9)));  // residual missing
  CHECK_FALSE(IsValidValueKey(std::string("b\x05", 2)));       // bool byte 5
  std::string neg_zero = "n";
  neg_zero += std::string("\x7f\xff\xff\xff\xff\xff\xff\xff\x80\x00", 10);  // image of -0.0
  CHECK_FALSE(IsValidValueKey(neg_zero));
}

// Intent: one key per value, whatever its representation; keys of integers that share a nearest double differ.
TEST_CASE("value_key: exact integers") {
  CHECK(Key(Value::Int(5)) == Key(Value::Number(5.0)));  // Python: 5 == 5.0 and hash(5) == hash(5.0)
  CHECK(HashValueKey(Value::Int(5)) == HashValueKey(Value::Number(5.0)));
  CHECK(Key(Value::Int(0)) == Key(Value::Number(-0.0)));  // Python: 0 == -0.0
  CHECK(Key(Value::Int(9007199254740993)) != Key(Value::Int(9007199254740992)));  // Python: 2**53 + 1 != 2**53
  CHECK(HashValueKey(Value::Int(9007199254740993)) != HashValueKey(Value::Int(9007199254740992)));
  CHECK(Key(Value::Int(9007199254740992)) == Key(Value::Number(9007199254740992.0)));  // Python: 2**53 == 2.0**53
  CHECK(Key(Value::Uint(UINT64_MAX)) != Key(Value::Number(18446744073709551616.0)));  // Python: 2**64 - 1 != 2.0**64
  CHECK(Key(Value::Int(INT64_MIN)) == Key(Value::Number(-9223372036854775808.0)));  // Python: -2**63 == -2.0**63
  std::string k;
  REQUIRE(MakeValueKey(Value::String("5"), &k));
  CHECK(k != Key(Value::Int(5)));  // text stays text
}

// Intent: bytewise order of keys is Python's numeric order of the mixed ints and floats.
TEST_CASE("value_key: exact order") {
  // Python: sorted([...]) of these values gives this order; equal ones are neighbours.
  const std::vector<Value> ascending = {
      Value::Number(-1e300),
      Value::Number(-9223372036854777856.0),  // the double below -2**63
      Value::Int(INT64_MIN),                  // -2**63
      Value::Int(INT64_MIN + 1),              // -2**63 + 1
      Value::Int(-9007199254740993),          // -(2**53 + 1)
      Value::Number(-9007199254740992.0),     // -2.0**53
      Value::Number(-0.5),
      Value::Int(0),
      Value::Number(0.5),
      Value::Int(9007199254740991),           // 2**53 - 1
      Value::Number(9007199254740992.0),      // 2.0**53
      Value::Int(9007199254740993),           // 2**53 + 1
      Value::Number(9007199254740994.0),      // 2.0**53 + 2
      Value::Int(INT64_MAX),                  // 2**63 - 1
      Value::Number(9223372036854775808.0),   // 2.0**63
      Value::Uint(uint64_t{1} << 63 | 1),     // 2**63 + 1
      Value::Uint(UINT64_MAX - 1),            // 2**64 - 2
      Value::Uint(UINT64_MAX),                // 2**64 - 1
      Value::Number(18446744073709551616.0),  // 2.0**64
      Value::Number(1e300)};
  for (size_t i = 0; i + 1 < ascending.size(); ++i) {
    INFO(i);
    CHECK(Key(ascending[i]) < Key(ascending[i + 1]));
  }
}

// Intent: integral keys come back as exact Int cells (Python: int(...)), others as floats; each validates.
TEST_CASE("value_key: integer cells") {
  const WideInt umax = UINT64_MAX;
  for (const Value& v : {Value::Int(9007199254740993), Value::Uint(UINT64_MAX), Value::Int(INT64_MIN),
                         Value::Int(-1), Value::Number(5.0)}) {
    const std::string k = Key(v);
    REQUIRE(IsValidValueKey(k));
    const Cell c = ValueKeyToCell(k);
    REQUIRE(c.kind == Cell::Kind::kInt);
    CHECK(c.integer == (v.is_integer() ? v.Wide() : static_cast<WideInt>(v.number)));
  }
  CHECK(ValueKeyToCell(Key(Value::Uint(UINT64_MAX))).integer == umax);  // Python: 2**64 - 1 == 18446744073709551615
  CHECK(ValueKeyToCell(Key(Value::Number(18446744073709551616.0))).kind == Cell::Kind::kFloat);  // 2**64: beyond
  CHECK(ValueKeyToCell(Key(Value::Number(0.5))).kind == Cell::Kind::kFloat);
  // A residual with no integer behind it is not canonical.
  std::string bad = Key(Value::Number(0.5));
  bad[10] = static_cast<char>(bad[10] + 1);
  CHECK_FALSE(IsValidValueKey(bad));
  // 2**53 + 2 is a double: residual -1 names 2**53 + 1, whose nearest double is 2**53, not it.
  std::string off = Key(Value::Number(9007199254740994.0));
  off[10] = static_cast<char>(off[10] - 1);
  CHECK_FALSE(IsValidValueKey(off));
}

}  // namespace
}  // namespace fanfold
