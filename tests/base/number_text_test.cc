// Tests for common/base/number_text: FormatNumber gives the shortest digits that
// round-trip, the same digits Python's repr() chooses, in the documented
// notation.
#include "common/base/number_text.h"

#include <doctest/doctest.h>

#include <charconv>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <sstream>
#include <string>

namespace fanfold {
namespace {

std::string Format(double v) {
  char buf[kNumberTextMax];
  return std::string(FormatNumber(v, buf));
}

// The significant digits of a decimal text: no sign, point, exponent, or
// leading/trailing zeros ("-0.00120e+05" -> "12").
std::string Digits(const std::string& s) {
  std::string d;
  for (char c : s) {
    if (c == 'e' || c == 'E') break;
    if (c >= '0' && c <= '9') d.push_back(c);
  }
  const size_t first = d.find_first_not_of('0');
  if (first == std::string::npos) return "0";
  d = d.substr(first);
  return d.substr(0, d.find_last_not_of('0') + 1);
}

}  // namespace

// Intent: the notation switches at 1e-6 and 1e16 as documented.
TEST_CASE("FormatNumber notation") {
  // Right-hand digits as Python 3.11 repr() prints them, notation ours.
  CHECK(Format(0) == "0");
  CHECK(Format(-0.0) == "0");
  CHECK(Format(12) == "12");
  CHECK(Format(-2.5) == "-2.5");
  CHECK(Format(100000) == "100000");
  CHECK(Format(1772719629) == "1772719629");
  CHECK(Format(0.1 + 0.2) == "0.30000000000000004");  // repr(0.1 + 0.2)
  CHECK(Format(0.000001) == "0.000001");
  CHECK(Format(1e-7) == "1e-07");                     // repr(1e-7)
  CHECK(Format(9999999999999998) == "9999999999999998");
  CHECK(Format(1e16) == "1e+16");                     // repr(1e16)
  CHECK(Format(1.2345678901234568e20) == "1.2345678901234568e+20");
  CHECK(Format(-1.7976931348623157e308) == "-1.7976931348623157e+308");  // -sys.float_info.max
  CHECK(Format(5e-324) == "5e-324");                  // smallest subnormal
  CHECK(Format(1.0 / 0.0) == "inf");
}

// Intent: over random doubles of every magnitude the digits equal Python's
// repr() digits and the text parses back to the same double.
TEST_CASE("FormatNumber agrees with python3 repr") {
  FILE* f = popen(R"(python3 - <<'PYEOF'
import random, struct
rnd = random.Random(42)
for _ in range(20000):
    x = struct.unpack('<d', struct.pack('<Q', rnd.getrandbits(64)))[0]
    if x != x or x in (float('inf'), float('-inf')):
        continue
    print(repr(x))
for _ in range(5000):
    print(repr(rnd.randrange(-10**15, 10**15) / rnd.choice([1, 10, 100, 1000, 7])))
PYEOF
)", "r");
  REQUIRE(f != nullptr);
  std::string out;
  char buf[4096];
  size_t n;
  while ((n = fread(buf, 1, sizeof buf, f)) > 0) out.append(buf, n);
  pclose(f);
  REQUIRE_MESSAGE(out.size() > 100000, "python3 did not run");
  std::istringstream in(out);
  std::string py;
  int checked = 0;
  while (in >> py) {
    double x;
    auto [p, ec] = std::from_chars(py.data(), py.data() + py.size(), x);
    REQUIRE(ec == std::errc());
    const std::string ours = Format(x);
    CAPTURE(py);
    CAPTURE(ours);
    double back;
    std::from_chars(ours.data(), ours.data() + ours.size(), back);
    CHECK((back == x || (x == 0 && back == 0)));
    CHECK(Digits(ours) == Digits(py));
    ++checked;
  }
  CHECK(checked > 24000);
}

// The text FormatNumber gave before its short-decimal path: std::to_chars
// (the C++ standard library's shortest round-trip) in the same notation.
std::string ToCharsText(double v) {
  if (v == 0) v = 0;
  const double mag = std::fabs(v);
  char buf[kNumberTextMax];
  const bool fixed = v == 0 || (mag >= 1e-6 && mag < 1e16);
  std::to_chars_result r = fixed ? std::to_chars(buf, buf + sizeof buf, v, std::chars_format::fixed)
                                 : std::to_chars(buf, buf + sizeof buf, v, std::chars_format::scientific);
  return std::string(buf, r.ptr);
}

// Intent: short decimals (the path that skips to_chars) print exactly as
// std::to_chars prints them: every decimal of up to 4 fractional digits in
// a range, random ones of every size up to and past 2^52 (where the path
// gives way), their neighbouring doubles, and quotients that are not short.
TEST_CASE("FormatNumber's short decimals equal std::to_chars") {
  int checked = 0;
  auto same = [&](double v) {
    CAPTURE(v);
    CHECK(Format(v) == ToCharsText(v));
    ++checked;
  };
  const double pow10[] = {1, 10, 100, 1000, 10000, 100000};
  for (int k = 0; k <= 5; ++k)
    for (int64_t i = -30000; i <= 30000; ++i) same(static_cast<double>(i) / pow10[k]);
  uint64_t seed = 20261203;
  auto next = [&seed]() {  // splitmix64
    uint64_t z = (seed += 0x9E3779B97F4A7C15ull);
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
    return z ^ (z >> 31);
  };
  for (int j = 0; j < 400000; ++j) {
    const int bits = static_cast<int>(next() % 56);  // magnitudes up to 2^55
    const int64_t i = static_cast<int64_t>(next() >> (64 - bits - 1)) * ((next() & 1) ? 1 : -1);
    const double v = static_cast<double>(i) / pow10[next() % 6];
    same(v);
    same(std::nextafter(v, INFINITY));
    same(std::nextafter(v, -INFINITY));
    same(static_cast<double>(i) / 7);
  }
  for (double edge : {0x1p52, 0x1p52 - 1, 0x1p52 / 10, 0x1p52 / 10000, 4503599627370.4951, 0.5, 0.05, 0.0001,
                      0.00015, 1e-6, 9.9999, 99999.99995, 0.1 + 0.2})
    for (double v : {edge, -edge, std::nextafter(edge, 0.0), std::nextafter(edge, INFINITY)}) same(v);
  CHECK(checked > 1900000);
}

}  // namespace fanfold

namespace fanfold {
namespace {

// Intent: exact integers print as Python's str(int) does, at the 64-bit edges and beyond.
TEST_CASE("AppendWideInt prints exact integers") {
  auto text = [](__int128 v) {
    std::string s;
    AppendWideInt(v, &s);
    return s;
  };
  CHECK(text(0) == "0");
  CHECK(text(-1) == "-1");
  CHECK(text(INT64_MIN) == "-9223372036854775808");    // Python: str(-2**63)
  CHECK(text(UINT64_MAX) == "18446744073709551615");   // Python: str(2**64 - 1)
  CHECK(text(static_cast<__int128>(UINT64_MAX) + 1) == "18446744073709551616");     // Python: str(2**64)
  CHECK(text(-static_cast<__int128>(UINT64_MAX) - 1) == "-18446744073709551616");  // Python: str(-2**64)
  CHECK(text(static_cast<__int128>(UINT64_MAX) * 1000 + 7) ==
        "18446744073709551615007");                    // Python: str((2**64 - 1) * 1000 + 7)
  const __int128 most_negative = -(static_cast<__int128>(1) << 126) * 2;
  CHECK(text(most_negative) == "-170141183460469231731687303715884105728");  // Python: str(-2**127)
}

}  // namespace
}  // namespace fanfold
