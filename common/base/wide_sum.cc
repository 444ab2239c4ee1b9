#include "common/base/wide_sum.h"

#include <cmath>

namespace fanfold {

using WideUint = unsigned __int128;

void WideSum::Encode(ByteWriter& w) const {
  const auto bits = static_cast<WideUint>(total_);
  w.U64(static_cast<uint64_t>(bits));
  w.U64(static_cast<uint64_t>(bits >> 64));
}

bool WideSum::Decode(ByteReader& r, uint64_t n) {
  const uint64_t lo = r.U64();
  const uint64_t hi = r.U64();
  if (!r.ok()) return false;
  const auto total = static_cast<WideInt>((static_cast<WideUint>(hi) << 64) | lo);
  const WideUint magnitude = total < 0 ? -static_cast<WideUint>(total) : static_cast<WideUint>(total);
  if (magnitude > (static_cast<WideUint>(n) << 64)) return false;
  total_ = total;
  return true;
}

void WideSum::Split(WideInt w, double* hi, double* lo) {
  *hi = static_cast<double>(w);  // rounds to nearest
  WideInt rest;
  if (std::fabs(*hi) >= 0x1p126) {
    // *hi may be 2^127, one past the WideInt range; it is even there, so
    // subtract its half twice.
    const auto half = static_cast<WideInt>(*hi / 2);
    rest = (w - half) - half;
  } else {
    rest = w - static_cast<WideInt>(*hi);
  }
  *lo = static_cast<double>(rest);
}

double WideSum::DivideRounded(WideInt w, uint64_t n) {
  if (w == 0) return 0.0;
  const WideUint a = w < 0 ? -static_cast<WideUint>(w) : static_cast<WideUint>(w);
  // Long division to a quotient q of at least 66 bits: a * 2^shift / n =
  // q + r/n. Its conversion to double then drops at least 13 bits, below
  // which one extra "sticky" bit for r != 0 decides a tie as the exact
  // fraction would, so the one rounding is the conversion's.
  WideUint q = a / n;
  WideUint r = a % n;  // < n < 2^64, so 2r cannot overflow
  int shift = 0;
  while (q < (WideUint{1} << 65)) {
    r <<= 1;
    q <<= 1;
    if (r >= n) {
      r -= n;
      q |= 1;
    }
    ++shift;
  }
  if (r != 0) q |= 1;
  const double magnitude = std::ldexp(static_cast<double>(q), -shift);  // exact: a power of two
  return w < 0 ? -magnitude : magnitude;
}

}  // namespace fanfold
