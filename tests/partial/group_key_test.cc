// Group keys: the byte layout of group_key.h, decoding back to cells,
// refusal of malformed keys, and the output sort order of cells.
#include "common/partial/group_key.h"

#include <doctest/doctest.h>

#include <cmath>
#include <cstdint>
#include <string>
#include <vector>

namespace fanfold {
namespace {

std::string Hex(const std::string& bytes) {
  static const char* kHex = "0123456789abcdef";
  std::string out;
  for (unsigned char c : bytes) {
    out.push_back(kHex[c >> 4]);
    out.push_back(kHex[c & 15]);
  }
  return out;
}

std::string KeyOf(const Value& v) {
  std::string key;
  AppendKeyValue(v, &key);
  return key;
}

// Intent: each tag and payload as the header specifies; the number bytes are
// Python's struct.pack('<d', x) (-2.5 -> 00000000000004c0, 0.5 -> 000000000000e03f)
// and struct.pack('<q', n) / struct.pack('<Q', n) for integers.
TEST_CASE("group_key: byte layout") {
  CHECK(Hex(KeyOf(Value::Missing())) == "00");
  CHECK(Hex(KeyOf(Value::Null())) == "00");
  CHECK(Hex(KeyOf(Value::Bool(false))) == "01");
  CHECK(Hex(KeyOf(Value::Bool(true))) == "02");
  CHECK(Hex(KeyOf(Value::Number(-2.5))) == "0300000000000004c0");
  CHECK(Hex(KeyOf(Value::Number(0.5))) == "03000000000000e03f");
  CHECK(Hex(KeyOf(Value::Number(1.0))) == "050100000000000000");  // integral: struct.pack('<q', 1)
  CHECK(Hex(KeyOf(Value::Int(-2))) == "05feffffffffffffff");      // struct.pack('<q', -2)
  CHECK(Hex(KeyOf(Value::Uint(UINT64_MAX))) == "06ffffffffffffffff");  // struct.pack('<Q', 2**64 - 1)
  CHECK(Hex(KeyOf(Value::Number(18446744073709551616.0))) == "03000000000000f043");  // 2.0**64: beyond, a double
  CHECK(Hex(KeyOf(Value::String("ab"))) == "04026162");
}

// Intent: -0 and +0 are one group (IEEE 754 says they compare equal).
TEST_CASE("group_key: minus zero is zero") {
  CHECK(KeyOf(Value::Number(-0.0)) == KeyOf(Value::Number(0.0)));
}

// Intent: a tuple decodes back to one cell per value, in order.
TEST_CASE("group_key: a tuple round-trips to cells") {
  std::string key;
  AppendKeyValue(Value::String("fr"), &key);
  AppendKeyValue(Value::Number(2024), &key);
  AppendKeyValue(Value::Null(), &key);
  AppendKeyValue(Value::Bool(true), &key);
  std::vector<Cell> cells;
  REQUIRE(DecodeKey(key, 4, &cells).ok());
  REQUIRE(cells.size() == 4);
  CHECK(cells[0].kind == Cell::Kind::kString);
  CHECK(cells[0].str == "fr");
  CHECK(cells[1].kind == Cell::Kind::kInt);  // 2024.0 is integral: an exact Int cell
  CHECK(cells[1].integer == 2024);
  CHECK(cells[2].kind == Cell::Kind::kNull);
  CHECK(cells[3].kind == Cell::Kind::kBool);
  CHECK(cells[3].boolean);
}

// Intent: truncated payloads, unknown tags and a wrong arity are refused,
// never read past the end.
TEST_CASE("group_key: malformed keys are refused") {
  std::vector<Cell> cells;
  const std::string number = KeyOf(Value::Number(3.5));
  CHECK_FALSE(DecodeKey(number.substr(0, 5), 1, &cells).ok());  // 4 of 8 payload bytes
  CHECK_FALSE(DecodeKey(std::string("\x04\x05" "ab", 4), 1, &cells).ok());  // says 5 bytes, has 2
  CHECK_FALSE(DecodeKey(std::string("\x09", 1), 1, &cells).ok());  // no such tag
  CHECK_FALSE(DecodeKey(number, 2, &cells).ok());  // one value where two were promised
  CHECK_FALSE(DecodeKey(number + number, 1, &cells).ok());  // bytes left over
  // Not canonical: an integral double, and a small integer under the unsigned tag.
  CHECK_FALSE(DecodeKey(std::string("\x03\0\0\0\0\0\0\xf0\x3f", 9), 1, &cells).ok());
  CHECK_FALSE(DecodeKey(std::string("\x06\x01\0\0\0\0\0\0\0", 9), 1, &cells).ok());
}

// Intent: equal numbers are one group whatever their representation, distinct integers
// sharing a nearest double are two, and each decodes to its exact Int cell.
TEST_CASE("group_key: exact integers") {
  CHECK(KeyOf(Value::Int(5)) == KeyOf(Value::Number(5.0)));  // Python: {5: 1, 5.0: 2} has one key
  CHECK(KeyOf(Value::Int(9007199254740993)) != KeyOf(Value::Int(9007199254740992)));  // Python: 2**53 + 1 != 2**53
  CHECK(KeyOf(Value::Int(9007199254740992)) == KeyOf(Value::Number(9007199254740992.0)));  // Python: 2**53 == 2.0**53
  CHECK(KeyOf(Value::Uint(uint64_t{1} << 63)) == KeyOf(Value::Number(9223372036854775808.0)));  // Python: 2**63 == 2.0**63
  CHECK(KeyOf(Value::Int(INT64_MIN)) == KeyOf(Value::Number(-9223372036854775808.0)));  // Python: -2**63 == -2.0**63
  const std::vector<WideInt> ints = {9007199254740993, 9007199254740992, static_cast<WideInt>(UINT64_MAX),
                                     1, INT64_MIN, -1, static_cast<WideInt>(INT64_MAX) + 1};
  for (WideInt w : ints) {
    std::vector<Cell> cells;
    REQUIRE(DecodeKey(KeyOf(Value::FromWide(w)), 1, &cells).ok());
    CHECK(cells[0].kind == Cell::Kind::kInt);
    CHECK(cells[0].integer == w);
  }
}

// Intent: integer and float cells order numerically and exactly, as Python's sorted() on ints and floats.
TEST_CASE("group_key: exact cell order") {
  // Python: sorted([2**53 + 1, 2.0**53, 2**53 - 1, 2**64 - 1, 2.0**64, -2**63, -1e300, 0.5, 1, float('nan')], key=...)
  // with NaN put last by hand (Python leaves it where it was).
  const std::vector<Cell> ascending = {
      Cell::Float(-1e300), Cell::Int(INT64_MIN), Cell::Float(0.5), Cell::Int(1),
      Cell::Int(9007199254740991), Cell::Float(9007199254740992.0), Cell::Int(9007199254740993),
      Cell::Int(static_cast<WideInt>(UINT64_MAX)), Cell::Float(18446744073709551616.0),
      Cell::Float(NAN)};
  for (size_t i = 0; i < ascending.size(); ++i) {
    INFO(i);
    CHECK(CompareCells(ascending[i], ascending[i]) == 0);
    for (size_t j = i + 1; j < ascending.size(); ++j) {
      CHECK(CompareCells(ascending[i], ascending[j]) < 0);
      CHECK(CompareCells(ascending[j], ascending[i]) > 0);
    }
  }
  CHECK(CompareCells(Cell::Int(5), Cell::Float(5.0)) == 0);  // Python: 5 == 5.0
}

// Intent: rows sort null < false < true < numbers (numerically) < strings (bytewise).
TEST_CASE("group_key: cell order") {
  const std::vector<Cell> ascending = {Cell::Null(),       Cell::Bool(false),   Cell::Bool(true),
                                       Cell::Float(-1e300), Cell::Float(2),      Cell::Float(10),
                                       Cell::String(""),    Cell::String("B"),   Cell::String("a")};
  for (size_t i = 0; i < ascending.size(); ++i) {
    CHECK(CompareCells(ascending[i], ascending[i]) == 0);
    for (size_t j = i + 1; j < ascending.size(); ++j) {
      CHECK(CompareCells(ascending[i], ascending[j]) < 0);
      CHECK(CompareCells(ascending[j], ascending[i]) > 0);
    }
  }
}

}  // namespace
}  // namespace fanfold
