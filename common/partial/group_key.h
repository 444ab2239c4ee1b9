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

#include <string>
#include <string_view>
#include <vector>

#include "common/base/cell.h"
#include "common/base/status.h"
#include "common/base/value.h"

namespace fanfold {

// Appends v's encoding to *key.
void AppendKeyValue(const Value& v, std::string* key);

// Decodes a key of `arity` values into cells (integers as exact Int cells).
// Fails on malformed or non-canonical bytes.
Status DecodeKey(std::string_view key, size_t arity, std::vector<Cell>* out);

// Total order of output cells used for sorting rows: null < bools (false <
// true) < numbers (numerically and exactly, ints against floats too; NaN
// last) < strings (bytewise) < lists/records (by
// their JSON text). Returns <0, 0, >0.
int CompareCells(const Cell& a, const Cell& b);

}  // namespace fanfold
