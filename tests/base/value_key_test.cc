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
    CHECK(ValueKeyToCell(k).number == d);
  }
  CHECK(ValueKeyToCell(Key(Value::String("hi"))).str == "hi");
  CHECK(ValueKeyToCell(Key(Value::Bool(true))).boolean);
  CHECK_FALSE(IsValidValueKey(""));
  CHECK_FALSE(IsValidValueKey("n123"));                        // short number
  CHECK_FALSE(IsValidValueKey(std::string("b\x05", 2)));       // bool byte 5
  std::string neg_zero = "n";
  neg_zero += std::string("\x7f\xff\xff\xff\xff\xff\xff\xff", 8);  // image of -0.0
  CHECK_FALSE(IsValidValueKey(neg_zero));
}

}  // namespace
}  // namespace fanfold
