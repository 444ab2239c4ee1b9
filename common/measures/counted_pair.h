// CountedPair: the encoded body shared by the sum and moments states — how
// many values were skipped, how many were used, and two doubles that exist
// only once a value was used (sum + correction; mean + M2). Plain data;
// the states validate the doubles themselves.
#pragma once

#include <cstdint>

#include "common/base/byte_io.h"

namespace fanfold {

struct CountedPair {
  uint64_t skipped = 0;
  uint64_t n = 0;
  double first = 0;
  double second = 0;

  // Encoding: varint skipped, varint n, then iff n > 0: f64 first, f64 second.
  void Encode(ByteWriter& w) const {
    w.Varint(skipped);
    w.Varint(n);
    if (n > 0) {
      w.F64(first);
      w.F64(second);
    }
  }

  // Reads Encode's bytes. Returns false iff they were truncated or bad.
  bool Decode(ByteReader& r) {
    skipped = r.Varint();
    n = r.Varint();
    first = second = 0;
    if (n > 0) {
      first = r.F64();
      second = r.F64();
    }
    return r.ok();
  }
};

}  // namespace fanfold
