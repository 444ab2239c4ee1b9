#include "common/base/number_text.h"

#include <charconv>
#include <cmath>

namespace fanfold {

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
  std::to_chars_result r =
      fixed ? std::to_chars(buf, buf + kNumberTextMax, v, std::chars_format::fixed)
            : std::to_chars(buf, buf + kNumberTextMax, v, std::chars_format::scientific);
  return {buf, static_cast<size_t>(r.ptr - buf)};
}

void AppendWideInt(__int128 v, std::string* out) {
  // Digits of the magnitude, least significant first; unsigned so that the
  // most negative value has a magnitude too.
  unsigned __int128 m = v < 0 ? -static_cast<unsigned __int128>(v) : static_cast<unsigned __int128>(v);
  char digits[40];
  size_t n = 0;
  do {
    digits[n++] = static_cast<char>('0' + static_cast<int>(m % 10));
    m /= 10;
  } while (m != 0);
  if (v < 0) out->push_back('-');
  while (n > 0) out->push_back(digits[--n]);
}

}  // namespace fanfold
