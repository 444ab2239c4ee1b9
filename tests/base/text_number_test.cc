// A string's numeric reading kept in the value (Value::ReadTextNumber):
// AsNumber and AsNumeric answer from it exactly as they answer from the
// text — verdict, kind, exact integer and every bit of the double — on
// named edge cells and on generated and mutated ones; and the one-pass
// ShortNumeric agrees with the general path it stands in front of.
#include "common/base/value.h"

#include <doctest/doctest.h>

#include <charconv>
#include <cmath>
#include <cstring>
#include <string>
#include <vector>

namespace fanfold {
namespace {

// The documented rule of AsNumeric, restated with from_chars only: an
// optional sign and decimal digits within [-2^63, 2^64-1] are that exact
// integer; any other text is from_chars's double when it reads the whole
// text as a finite number ('+' first allowed, but one sign at most: Python
// 3's float('+-5') is a ValueError).
bool ReferenceNumeric(std::string_view s, Value* out) {
  if (s.empty()) return false;
  const bool negative = s[0] == '-';
  std::string_view digits = s[0] == '-' || s[0] == '+' ? s.substr(1) : s;
  bool all_digits = !digits.empty();
  for (char c : digits) all_digits = all_digits && c >= '0' && c <= '9';
  if (all_digits) {
    uint64_t m = 0;
    auto [p, ec] = std::from_chars(digits.data(), digits.data() + digits.size(), m);
    if (ec == std::errc() && p == digits.data() + digits.size()) {
      if (!negative) {
        *out = Value::Uint(m);
        return true;
      }
      if (m <= uint64_t{1} << 63) {
        *out = Value::FromWide(-static_cast<WideInt>(m));
        return true;
      }
    }
  }
  const char* b = s.data() + (s[0] == '+' ? 1 : 0);
  const char* e = s.data() + s.size();
  if (s[0] == '+' && b != e && *b == '-') return false;
  double d = 0;
  auto [p, ec] = std::from_chars(b, e, d);
  if (ec != std::errc() || p != e || !std::isfinite(d)) return false;
  *out = Value::Number(d);
  return true;
}

bool SameBits(double a, double b) { return std::memcmp(&a, &b, sizeof a) == 0; }

// Checks one text: the fresh value, a value that read its text, and a copy
// of that one answer alike, and as the reference says.
void CheckText(const std::string& text) {
  CAPTURE(text);
  const Value fresh = Value::String(text);
  Value read = fresh;
  read.ReadTextNumber();
  const Value copy = read;  // what a measure receives
  REQUIRE(copy.kind == ValueKind::kString);
  REQUIRE(copy.str == text);
  Value want, a, b, c;
  const bool numeric = ReferenceNumeric(text, &want);
  REQUIRE(fresh.AsNumeric(&a) == numeric);
  REQUIRE(copy.AsNumeric(&b) == numeric);
  REQUIRE(copy.AsNumeric(&c) == numeric);  // a second read of the kept result
  if (numeric) {
    for (const Value* v : {&a, &b, &c}) {
      CHECK(v->kind == ValueKind::kNumber);
      CHECK(v->rep == want.rep);
      CHECK(v->bits == want.bits);
      CHECK(SameBits(v->number, want.number));
    }
  }
  double x = -7, y = -7, z = -7;
  const bool number = fresh.AsNumber(&x);
  REQUIRE(number == numeric);  // AsNumber accepts exactly what AsNumeric accepts
  REQUIRE(copy.AsNumber(&y) == number);
  REQUIRE(read.AsNumber(&z) == number);
  if (number) {
    CHECK(SameBits(x, y));
    CHECK(SameBits(x, z));
  }
}

// Intent: the edge cells of a CSV column read alike with and without the
// kept reading. Expected values from Python 3 (float(), int()) where named.
TEST_CASE("Value::ReadTextNumber: edge cells answer as their text does") {
  for (const char* t : {"0", "-0", "+0", "-000", "0.0", "-0.0", "5.", ".5", "-.5", "+.5", "-", "+", ".", "-.", "+-5",
                        "--5", "++5", "-+5", " 5", "5 ", "5\r", "1e3", "1E-3", "-1e308", "1e309", "nan", "inf",
                        "-inf", "0x10", "1_000", "12,5", "٣", "007", "-007.50", "999999999999999",
                        "-999999999999999", "9999999999999999", "99999999999999999", "0.000000000000001",
                        "123456789.123456", "1234567890.1234567", "9007199254740992", "9007199254740993",
                        "-9007199254740993", "9223372036854775807", "9223372036854775808", "-9223372036854775808",
                        "-9223372036854775809", "18446744073709551615", "18446744073709551616",
                        "00000000000000000000000001", "12345678901234567890123", "L-24806", "2026-03-01T00:00:00Z",
                        "4.1.3", "1..2", "1.2.", "abc"}) {
    CheckText(t);
  }
  // Python 3: float('+-5') and float('-+5') raise ValueError (one sign at
  // most); float('+5') == 5.0.
  for (const char* t : {"+-5", "-+5", "+-0", "++5"}) {
    CAPTURE(t);
    double d = 0;
    Value n;
    CHECK_FALSE(Value::String(t).AsNumber(&d));
    CHECK_FALSE(Value::String(t).AsNumeric(&n));
  }
  double five = 0;
  CHECK((Value::String("+5").AsNumber(&five) && five == 5.0));
  // Python 3: float('9007199254740993') == 9007199254740992.0 (2^53 + 1
  // rounds to even), while the integer stays exact.
  Value v = Value::String("9007199254740993");
  v.ReadTextNumber();
  Value n;
  REQUIRE(v.AsNumeric(&n));
  CHECK(n.is_integer());
  CHECK(n.Wide() == static_cast<WideInt>(9007199254740993LL));
  double d = 0;
  REQUIRE(v.AsNumber(&d));
  CHECK(d == 9007199254740992.0);
  // Python 3: math.copysign(1, float('-0')) == -1.0; the exact integer is 0.
  v = Value::String("-0");
  v.ReadTextNumber();
  REQUIRE(v.AsNumber(&d));
  CHECK(std::signbit(d));
  REQUIRE(v.AsNumeric(&n));
  CHECK(n.is_integer());
  CHECK(n.Wide() == 0);
  // Python 3: int('18446744073709551615') == 2**64 - 1 is exact;
  // float('18446744073709551616') == 1.8446744073709552e+19 is a double.
  v = Value::String("18446744073709551615");
  v.ReadTextNumber();
  REQUIRE(v.AsNumeric(&n));
  CHECK(n.rep == NumberRep::kUint64);
  CHECK(n.bits == UINT64_MAX);
  v = Value::String("18446744073709551616");
  v.ReadTextNumber();
  REQUIRE(v.AsNumeric(&n));
  CHECK(n.rep == NumberRep::kDouble);
  CHECK(n.number == 18446744073709551616.0);
  // A 64-bit id: -2^63 is exact (Python: int('-9223372036854775808') == -2**63).
  v = Value::String("-9223372036854775808");
  v.ReadTextNumber();
  REQUIRE(v.AsNumeric(&n));
  CHECK(n.rep == NumberRep::kInt64);
  CHECK(static_cast<int64_t>(n.bits) == INT64_MIN);
}

// Intent: reading the text leaves every other value as it was: a missing
// cell stays missing (no number), an empty string stays no number, numbers
// and booleans keep their fields.
TEST_CASE("Value::ReadTextNumber: no effect on values that are not text") {
  Value missing = Value::Missing();
  missing.ReadTextNumber();
  double d = 0;
  CHECK(missing.is_missing());
  CHECK(!missing.AsNumber(&d));
  Value empty = Value::String("");
  empty.ReadTextNumber();
  Value n;
  CHECK(!empty.AsNumber(&d));
  CHECK(!empty.AsNumeric(&n));
  Value big = Value::Uint(UINT64_MAX);
  big.ReadTextNumber();
  CHECK(big.rep == NumberRep::kUint64);
  CHECK(big.bits == UINT64_MAX);
  CHECK(big.text_number == TextNumber::kUnread);
  Value yes = Value::Bool(true);
  yes.ReadTextNumber();
  CHECK(yes.Truthy());
  CHECK(!yes.AsNumber(&d));
  // Reading twice keeps the first result.
  Value twice = Value::String("-12.375");
  twice.ReadTextNumber();
  twice.ReadTextNumber();
  REQUIRE(twice.AsNumber(&d));
  CHECK(d == -12.375);  // Python 3: float('-12.375') == -12.375, exact in binary
}

// Intent: no generated or mutated cell tells the kept reading from the
// text's: 200,000 texts, half shaped like CSV numbers (sign, up to 21
// digits, a point), half any bytes from an alphabet of number characters.
TEST_CASE("Value::ReadTextNumber: generated and mutated cells answer as their text does") {
  uint64_t state = 13;
  auto next = [&state] {
    state = state * 6364136223846793005ULL + 1442695040888963407ULL;
    return state >> 33;
  };
  const char alphabet[] = "0123456789012345678901234567890123456789..--++eE x";
  int shaped = 0;
  for (int round = 0; round < 200000; ++round) {
    std::string text;
    if (round % 2 == 0) {
      const uint64_t sign = next() % 4;
      if (sign == 1) text += '-';
      if (sign == 2) text += '+';
      const int digits = 1 + static_cast<int>(next() % 21);
      const int point = static_cast<int>(next() % (digits + 3)) - 2;  // < 0: none
      for (int d = 0; d < digits; ++d) {
        if (d == point) text += '.';
        text += static_cast<char>('0' + next() % 10);
      }
      if (point == digits) text += '.';
      ++shaped;
    } else {
      const int n = static_cast<int>(next() % 14);
      for (int i = 0; i < n; ++i) text += alphabet[next() % (sizeof alphabet - 1)];
    }
    CheckText(text);
  }
  CHECK(shaped == 100000);
}

}  // namespace
}  // namespace fanfold
