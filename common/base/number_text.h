// FormatNumber: the one text form of a double used wherever fanfold turns a
// number into text (the expression function text(), string functions applied
// to numbers). Shortest round-trip digits (std::to_chars), in plain decimal
// for 1e-6 <= |x| < 1e16 and in exponent form outside; pure and thread-safe.
#pragma once

#include <cstddef>
#include <string>
#include <string_view>

namespace fanfold {

// Enough for any double in either notation, sign included.
inline constexpr size_t kNumberTextMax = 40;

// Writes the text of `v` into buf (at least kNumberTextMax bytes) and returns
// a view of it. Integers print without a fraction ("100000", not "1e+05");
// -0 prints as "0"; NaN and infinities as "nan", "inf", "-inf".
std::string_view FormatNumber(double v, char* buf);

// Appends the decimal digits of the exact integer v (sign if negative) to *out.
void AppendWideInt(__int128 v, std::string* out);

}  // namespace fanfold
