// Group keys: the canonical byte encoding of a record's key tuple, used as
// the group table's hash key and inside partial states, and its decoding to
// output cells. One Value per key, each as a tag byte then its payload:
//   0x00 null (missing, null, object/array)   0x01 false   0x02 true
//   0x03 number, not an integer in [-2^63, 2^64): 8 bytes, IEEE 754 bits
//        little-endian (-0 stored as +0)
//   0x04 string: LEB128 length, then the bytes
//   0x05 integer in [-2^63, 2^63): 8 bytes, two's complement little-endian
//   0x06 integer in [2^63, 2^64): 8 bytes, unsigned little-endian
// A number that is an integer in [-2^63, 2^64) is 0x05/0x06 whether it came
// as an integer or as an integral double, so 5 and 5.0 are one group (as in
// Python's dict and sqlite3's GROUP BY) and 2^53 + 1 is not 2^53.
// Equal tuples give equal bytes, so grouping is a byte comparison.
// Pure functions; thread-safe.
#pragma once

#include <bit>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <string>
#include <string_view>
#include <vector>

#include "common/base/cell.h"
#include "common/base/status.h"
#include "common/base/value.h"

namespace fanfold {

// Appends v's encoding to *key.
void AppendKeyValue(const Value& v, std::string* key);

// The most bytes v's encoding takes (tag, length, payload).
inline size_t KeyValueBound(const Value& v) { return v.kind == ValueKind::kString ? 11 + v.str.size() : 9; }
// Writes v's encoding (AppendKeyValue's bytes) at out, which has room for
// KeyValueBound(v) bytes; returns how many it wrote. No allocation: a
// record's key is built in one buffer.
inline size_t WriteKeyValue(const Value& v, char* out);

// Decodes a key of `arity` values into cells (integers as exact Int cells).
// Fails on malformed or non-canonical bytes.
Status DecodeKey(std::string_view key, size_t arity, std::vector<Cell>* out);

// Total order of output cells used for sorting rows: null < bools (false <
// true) < numbers (numerically and exactly, ints against floats too; NaN
// last) < strings (bytewise) < lists/records (by
// their JSON text). Returns <0, 0, >0.
int CompareCells(const Cell& a, const Cell& b);

// Inline: it runs once per key value of every record.
namespace group_key_detail {
inline constexpr uint8_t kTagDouble = 0x03;
inline constexpr uint8_t kTagInt64 = 0x05;
inline constexpr uint8_t kTagUint64 = 0x06;
inline constexpr double kTwo63 = 9223372036854775808.0;
inline constexpr double kTwo64 = 18446744073709551616.0;
}  // namespace group_key_detail

inline size_t WriteKeyValue(const Value& v, char* out) {
  using namespace group_key_detail;
  const auto put64 = [out](uint8_t tag, uint64_t bits) {
    out[0] = static_cast<char>(tag);
    std::memcpy(out + 1, &bits, 8);  // little-endian, as ByteWriter writes
    return size_t{9};
  };
  switch (v.kind) {
    case ValueKind::kBool:
      out[0] = static_cast<char>(v.boolean ? 0x02 : 0x01);
      return 1;
    case ValueKind::kNumber: {
      if (v.is_integer()) return put64(v.rep == NumberRep::kUint64 ? kTagUint64 : kTagInt64, v.bits);
      const double d = v.number;
      // An integral double in range is keyed as that integer (see the header).
      if (d >= -kTwo63 && d < kTwo64 && std::floor(d) == d) {
        if (d < kTwo63) return put64(kTagInt64, static_cast<uint64_t>(static_cast<int64_t>(d)));
        return put64(kTagUint64, static_cast<uint64_t>(d));
      }
      return put64(kTagDouble, std::bit_cast<uint64_t>(d));
    }
    case ValueKind::kString: {
      out[0] = 0x04;
      size_t at = 1;
      uint64_t n = v.str.size();
      while (n >= 0x80) {  // LEB128 length
        out[at++] = static_cast<char>(static_cast<uint8_t>(n) | 0x80);
        n >>= 7;
      }
      out[at++] = static_cast<char>(n);
      if (!v.str.empty()) std::memcpy(out + at, v.str.data(), v.str.size());
      return at + v.str.size();
    }
    default:
      out[0] = 0x00;
      return 1;
  }
}

}  // namespace fanfold
