// Value::AsNumber on text: the short-decimal fast path gives exactly what
// std::from_chars (correctly rounded, the reference here) gives, on
// generated and mutated cells.
#include "common/base/value.h"

#include <doctest/doctest.h>

#include <charconv>
#include <cmath>
#include <cstring>
#include <string>

namespace fanfold {
namespace {

// AsNumber as it was before the fast path: from_chars alone, after at most
// one sign (Python 3's float('+-5') is a ValueError).
bool Reference(std::string_view s, double* out) {
  if (s.empty()) return false;
  const char* b = s.data();
  const char* e = b + s.size();
  if (*b == '+' && ++b != e && *b == '-') return false;
  auto [p, ec] = std::from_chars(b, e, *out);
  return ec == std::errc() && p == e && std::isfinite(*out);
}

// Intent: the fast path never changes a verdict or a bit.
TEST_CASE("Value::AsNumber: short decimals equal from_chars, bit for bit") {
  uint64_t state = 7;
  auto next = [&state] {
    state = state * 6364136223846793005ULL + 1442695040888963407ULL;
    return state >> 33;
  };
  const char alphabet[] = "0123456789012345678901234567890123456789..--+eE x";
  int fast_shape = 0;
  for (int round = 0; round < 200000; ++round) {
    std::string text;
    if (round % 2 == 0) {  // a well-formed decimal of 1..18 digits
      if (next() % 3 == 0) text += '-';
      const int digits = 1 + static_cast<int>(next() % 18);
      const int point = static_cast<int>(next() % (digits + 2)) - 1;  // -1: none
      for (int d = 0; d < digits; ++d) {
        if (d == point) text += '.';
        text += static_cast<char>('0' + next() % 10);
      }
      if (point == digits) text += '.';
      fast_shape += digits <= 15;
    } else {  // anything from the alphabet
      const int n = static_cast<int>(next() % 12);
      for (int i = 0; i < n; ++i) text += alphabet[next() % (sizeof alphabet - 1)];
    }
    CAPTURE(text);
    double got = -7, want = -7;
    const bool a = Value::String(text).AsNumber(&got);
    const bool b = Reference(text, &want);
    REQUIRE(a == b);
    if (a) CHECK(std::memcmp(&got, &want, sizeof got) == 0);
  }
  CHECK(fast_shape > 50000);
  // Edges named: a sign alone, a point alone, a bare point at either end,
  // negative zero, 15 and 16 digits.
  for (const char* t : {"-", ".", "-.", "5.", ".5", "-.5", "-0", "-0.000", "+7.25", "+-7.25", "999999999999999",
                        "9999999999999999", "0.000000000000001", "123456789.123456"}) {
    CAPTURE(t);
    double got = -7, want = -7;
    REQUIRE(Value::String(t).AsNumber(&got) == Reference(t, &want));
    CHECK(std::memcmp(&got, &want, sizeof got) == 0);
  }
}

}  // namespace
}  // namespace fanfold
