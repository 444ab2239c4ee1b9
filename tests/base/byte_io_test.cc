// ByteWriter / ByteReader: little-endian fixed widths, LEB128 varints, and
// a reader that fails, and stays failed, instead of reading past the end.
#include "common/base/byte_io.h"

#include <doctest/doctest.h>

#include <string>

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

// Intent: fixed widths are little-endian; a double is its IEEE 754 bits
// (Python: struct.pack('<d', 1.0).hex() == '000000000000f03f').
TEST_CASE("byte_io: fixed-width layout") {
  std::string out;
  ByteWriter w(&out);
  w.U16(0x0102);
  w.U32(0x01020304);
  w.F64(1.0);
  CHECK(Hex(out) == "0201" "04030201" "000000000000f03f");
}

// Intent: varints are unsigned LEB128; 624485 -> e5 8e 26 is the worked
// example of the DWARF standard (v4, §7.6), 300 -> ac 02 the protobuf docs' one.
TEST_CASE("byte_io: LEB128 varints") {
  for (auto [value, hex] : {std::pair<uint64_t, const char*>{0, "00"}, {127, "7f"}, {128, "8001"},
                            {300, "ac02"}, {624485, "e58e26"}, {UINT64_MAX, "ffffffffffffffffff01"}}) {
    std::string out;
    ByteWriter w(&out);
    w.Varint(value);
    CHECK(Hex(out) == hex);
    ByteReader r(out);
    CHECK(r.Varint() == value);
    CHECK(r.ok());
    CHECK(r.at_end());
  }
}

// Intent: everything written reads back in order.
TEST_CASE("byte_io: round trip") {
  std::string out;
  ByteWriter w(&out);
  w.U8(7);
  w.I64(-5);
  w.Str("hello");
  w.F64(-0.25);
  ByteReader r(out);
  CHECK(r.U8() == 7);
  CHECK(r.I64() == -5);
  CHECK(r.Str() == "hello");
  CHECK(r.F64() == -0.25);
  CHECK(r.ok());
  CHECK(r.at_end());
}

// Intent: a read past the end fails, returns zero, and every later read
// fails too, even one that would fit.
TEST_CASE("byte_io: failure is sticky") {
  const std::string three("\x01\x02\x03", 3);
  ByteReader r(three);
  CHECK(r.U32() == 0);
  CHECK_FALSE(r.ok());
  CHECK(r.U8() == 0);
  CHECK_FALSE(r.ok());
}

// Intent: a string longer than what is left, and an over-long varint
// (11 continuation bytes), are refused.
TEST_CASE("byte_io: hostile lengths") {
  const std::string short_string("\x05" "ab", 3);  // says 5 bytes, has 2
  ByteReader s(short_string);
  CHECK(s.Str().empty());
  CHECK_FALSE(s.ok());
  const std::string long_varint(11, '\x80');
  ByteReader v(long_varint);
  CHECK(v.Varint() == 0);
  CHECK_FALSE(v.ok());
}

// Intent: Count refuses an item count that cannot fit in the bytes left.
TEST_CASE("byte_io: Count guards allocations") {
  std::string out;
  ByteWriter w(&out);
  w.Varint(4);
  w.Bytes("abcdefgh");  // 8 bytes: room for 4 items of 2, not of 3
  ByteReader fits(out);
  CHECK(fits.Count(2) == 4);
  CHECK(fits.ok());
  ByteReader too_many(out);
  CHECK(too_many.Count(3) == 0);
  CHECK_FALSE(too_many.ok());
}

}  // namespace
}  // namespace fanfold
