// Group keys: the byte layout of group_key.h, decoding back to cells,
// refusal of malformed keys, and the output sort order of cells.
#include "common/partial/group_key.h"

#include <doctest/doctest.h>

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
// Python's struct.pack('<d', x) (1.0 -> 000000000000f03f, -2.5 -> 00000000000004c0).
TEST_CASE("group_key: byte layout") {
  CHECK(Hex(KeyOf(Value::Missing())) == "00");
  CHECK(Hex(KeyOf(Value::Null())) == "00");
  CHECK(Hex(KeyOf(Value::Bool(false))) == "01");
  CHECK(Hex(KeyOf(Value::Bool(true))) == "02");
  CHECK(Hex(KeyOf(Value::Number(1.0))) == "03000000000000f03f");
  CHECK(Hex(KeyOf(Value::Number(-2.5))) == "0300000000000004c0");
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
  CHECK(cells[1].number == 2024);
  CHECK(cells[2].kind == Cell::Kind::kNull);
  CHECK(cells[3].kind == Cell::Kind::kBool);
  CHECK(cells[3].boolean);
}

// Intent: truncated payloads, unknown tags and a wrong arity are refused,
// never read past the end.
TEST_CASE("group_key: malformed keys are refused") {
  std::vector<Cell> cells;
  const std::string number = KeyOf(Value::Number(3));
  CHECK_FALSE(DecodeKey(number.substr(0, 5), 1, &cells).ok());  // 4 of 8 payload bytes
  CHECK_FALSE(DecodeKey(std::string("\x04\x05" "ab", 4), 1, &cells).ok());  // says 5 bytes, has 2
  CHECK_FALSE(DecodeKey(std::string("\x09", 1), 1, &cells).ok());  // no such tag
  CHECK_FALSE(DecodeKey(number, 2, &cells).ok());  // one value where two were promised
  CHECK_FALSE(DecodeKey(number + number, 1, &cells).ok());  // bytes left over
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
