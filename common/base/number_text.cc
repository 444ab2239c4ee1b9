#include "common/base/number_text.h"

#include <charconv>
#include <cmath>
#include <cstdint>

namespace fanfold {
namespace {

// to_chars' fixed shortest text for a decimal of at most kMaxShortDigits
// fractional digits (sums of readings such as 59.2), without to_chars'
// general search; false when v is not one. Shortest in fixed notation means
// the fewest fractional digits k with an integer c whose c / 10^k parses
// back to v; with |v * 10^k| < 2^52 an interval of doubles parsing to v is
// narrower than 1 / 10^k, so at most one c fits, and it lies within 1 of
// the rounded product. c / 10^k in double arithmetic (both exact, the
// quotient correctly rounded) is what parsing its text gives.
constexpr int kMaxShortDigits = 4;

bool FormatShortDecimal(double v, char* buf, size_t* len) {
  static constexpr double kPow10[kMaxShortDigits + 1] = {1, 10, 100, 1000, 10000};
  for (int k = 0; k <= kMaxShortDigits; ++k) {
    const double scaled = v * kPow10[k];
    if (!(std::fabs(scaled) < 0x1p52)) return false;
    const double n = std::nearbyint(scaled);
    for (const double c : {n, n - 1, n + 1}) {
      if (c / kPow10[k] != v) continue;
      // c has no trailing zero when k > 0 (else k - 1 digits would do).
      const int64_t i = static_cast<int64_t>(c);
      uint64_t m = i < 0 ? static_cast<uint64_t>(-i) : static_cast<uint64_t>(i);
      char digits[24];
      int d = 0;
      do {
        digits[d++] = static_cast<char>('0' + m % 10);
        m /= 10;
      } while (m != 0 || d <= k);  // at least one digit before the point
      size_t at = 0;
      if (i < 0) buf[at++] = '-';
      while (d > 0) {
        if (d == k) buf[at++] = '.';
        buf[at++] = digits[--d];
      }
      *len = at;
      return true;
    }
  }
  return false;
}

}  // namespace

std::string_view FormatNumber(double v, char* buf) {
  if (v == 0) v = 0;  // folds -0 into 0: "-0" as a group key surprises everyone
  const double mag = std::fabs(v);
  // Plain shortest to_chars picks "1e+05" over "100000" because it is one
  // character shorter; ids and epoch seconds read better in fixed notation,
  // which keeps the round-trip guarantee. Above 1e16 fixed notation would
  // print every binary digit of a large integer ("123456789012345683968"),
  // so exponent form takes over there (forced: plain to_chars would still
  // choose those 21 digits over the 22 characters of 1.2345678901234568e+20).
  const bool fixed = v == 0 || (mag >= 1e-6 && mag < 1e16);
  size_t len = 0;
  if (fixed && FormatShortDecimal(v, buf, &len)) return {buf, len};
  std::to_chars_result r =
      fixed ? std::to_chars(buf, buf + kNumberTextMax, v, std::chars_format::fixed)
            : std::to_chars(buf, buf + kNumberTextMax, v, std::chars_format::scientific);
  return {buf, static_cast<size_t>(r.ptr - buf)};
}

void AppendWideInt(__int128 v, std::string* out) {
  // Digits of the magnitude, least significant first; unsigned so that the
  // most negative value has a magnitude too.
  unsigned __int128 m = v < 0 ? -static_cast<unsigned __int128>(v) : static_cast<unsigned __int128>(v);
  char text[41];  // filled from the end: the digits, then the sign
  size_t at = sizeof text;
  while (m > UINT64_MAX) {  // 128-bit division only for the digits past 64 bits
    text[--at] = static_cast<char>('0' + static_cast<int>(m % 10));
    m /= 10;
  }
  uint64_t small = static_cast<uint64_t>(m);
  do {
    text[--at] = static_cast<char>('0' + static_cast<int>(small % 10));
    small /= 10;
  } while (small != 0);
  if (v < 0) text[--at] = '-';
  out->append(text + at, sizeof text - at);
}

}  // namespace fanfold
