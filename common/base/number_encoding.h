// NumberEncoding: how the states that keep a number as it was (min/max,
// at_lowest/at_highest) write it: a double, or an exact int64 / uint64, so
// a 64-bit id comes back with every digit. Also its output cell. Pure
// functions; thread-safe.
#pragma once

#include "common/base/byte_io.h"
#include "common/base/cell.h"
#include "common/base/value.h"

namespace fanfold {

struct NumberEncoding {
  // Tags: 'n' f64 (a double), 'i' i64 (kInt64), 'u' u64 (kUint64, > INT64_MAX).
  static constexpr uint8_t kDouble = 'n';
  static constexpr uint8_t kInt64 = 'i';
  static constexpr uint8_t kUint64 = 'u';

  // A double's canonical form where it is kept: -0.0 becomes 0.0, so a
  // result does not depend on which of two equal zeros came first.
  // REQUIRES: v is a kNumber.
  static Value Canonical(const Value& v) {
    return !v.is_integer() && v.number == 0 ? Value::Number(0.0) : v;
  }

  // Appends tag + payload. REQUIRES: v is a kNumber.
  static void Write(const Value& v, ByteWriter& w);
  // Reads the payload of a number whose tag (one of the three) was already
  // read. Returns false iff truncated, a uint64 tag holds a value at or
  // below INT64_MAX, or, unless any_double, the double is NaN or -0.0 (what
  // Write makes of a Canonical, non-NaN number).
  static bool Read(uint8_t tag, ByteReader& r, bool any_double, Value* out);
  static bool IsTag(uint8_t tag) { return tag == kDouble || tag == kInt64 || tag == kUint64; }

  // Int (exact) for an integer, else Float.
  static Cell ToCell(const Value& v) { return v.is_integer() ? Cell::Int(v.Wide()) : Cell::Float(v.number); }
};

}  // namespace fanfold
