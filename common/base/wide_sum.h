// WideSum: the exact sum of the integer values a measure has seen (sum,
// mean), in a 128-bit integer (WideInt), with the two conversions the
// measures need: to a pair of doubles whose sum is the value to about 106
// bits, and divided by a count, rounded once. Plain value type; the owning
// state decides what an overflow means. Thread-compatible.
#pragma once

#include <cstdint>

#include "common/base/byte_io.h"
#include "common/base/value.h"

namespace fanfold {

class WideSum {
 public:
  WideInt total() const { return total_; }

  // Adds x. Returns false iff the sum would leave the WideInt range (it
  // then stays as it was). With every addend within [-2^63, 2^64) that
  // takes more than 2^63 of them, so it is defined, not expected.
  bool Add(WideInt x) {
    WideInt t;
    if (__builtin_add_overflow(total_, x, &t)) return false;  // t holds the wrapped sum
    total_ = t;
    return true;
  }
  void Clear() { total_ = 0; }

  // Encoding: 16 bytes, the two's complement of the total, little-endian.
  void Encode(ByteWriter& w) const;
  // Reads Encode's bytes; false iff truncated or |total| > n * 2^64, which
  // n integers of [-2^63, 2^64) cannot reach.
  bool Decode(ByteReader& r, uint64_t n);

  // *hi = the double nearest to w, *lo = the double nearest to w - *hi: the
  // pair a compensated sum takes in to lose nothing a double pair can hold.
  static void Split(WideInt w, double* hi, double* lo);

  // w / n rounded once to the nearest double (ties to even), as Python's
  // int / int true division is. REQUIRES: n > 0.
  static double DivideRounded(WideInt w, uint64_t n);

 private:
  WideInt total_ = 0;
};

}  // namespace fanfold
