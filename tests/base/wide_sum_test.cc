// WideSum: the exact integer part of sum and mean, its encoding, its split
// into two doubles and its once-rounded division, against Python's int
// (arbitrary precision) and int / int true division (correctly rounded).
#include "common/base/wide_sum.h"

#include <doctest/doctest.h>

#include <cstdint>
#include <string>

namespace fanfold {
namespace {

constexpr WideInt W(uint64_t hi, uint64_t lo) {
  return static_cast<WideInt>((static_cast<unsigned __int128>(hi) << 64) | lo);
}
constexpr WideInt kWideMax = W(INT64_MAX, UINT64_MAX);  // 2^127 - 1
constexpr WideInt kWideMin = -kWideMax - 1;             // -2^127

struct DivisionCase {
  WideInt w;
  uint64_t n;
  double expected;  // Python: float.hex(w / n)
};

// Ties, near-ties, the extremes of the range, tiny quotients and random
// cases (Python: random.seed(11); w in [-2^127, 2^127), n in [1, 2^64) and
// w in [-2^70, 2^70), n in [1, 1000)).
const DivisionCase kDivisions[] = {
    {W(0, 18014398509481986), 2u, 0x1.0000000000000p+53},  // (2^54+2)/2 = 2^53+1: tie, to even
    {W(0, 18014398509481987), 2u, 0x1.0000000000001p+53},  // 2^53+1.5: above the tie
    {W(0, 9007199254740993), 1u, 0x1.0000000000000p+53},
    {-W(0, 9007199254740993), 1u, -0x1.0000000000000p+53},
    {-W(0, 18014398509481987), 2u, -0x1.0000000000001p+53},
    {kWideMax, 1u, 0x1.0000000000000p+127},
    {kWideMin, 1u, -0x1.0000000000000p+127},
    {W(0, 1), 3u, 0x1.5555555555555p-2},
    {W(0, 2), 3u, 0x1.5555555555555p-1},
    {W(0, 1), 18446744073709551615u, 0x1.0000000000000p-64},
    {W(0, 18446744073709551615u), 18446744073709551615u, 0x1.0000000000000p+0},
    {-W(0, 1), 18446744073709551615u, -0x1.0000000000000p-64},
    {W(2, 18446744073709551614u), 3u, 0x1.0000000000000p+64},
    {W(5421010862427522170, 687399551400673280), 7u, 0x1.57ea83019dd5dp+123},
    {-W(5421010862427522170, 687399551400673281), 9223372036854775813u, -0x1.2ced32a16a1b1p+63},
    {W(5187557457942614157, 15806332507635138087u), 15970126346341786990u, 0x1.4c9fedc8a501fp+62},
    {-W(3626606606854918713, 16710472744291462107u), 9368018003224643703u, -0x1.8c6ad9815111bp+62},
    {W(2480216081659408167, 16424620972549922111u), 9937141309157814054u, 0x1.ff294e06a2323p+61},
    {W(2271319057742530663, 11991692969617228926u), 18118270698365290188u, 0x1.00bd1c0a29d3dp+61},
    {W(5130194536616918548, 11061001373472520760u), 9746914079769519569u, 0x1.0d7c7cc058767p+63},
    {W(352777619416061162, 15540037672059346467u), 8126364788730623508u, 0x1.63a07f4301e3ap+59},
    {-W(7655606033488393488, 18362003997445774807u), 5426138762552420430u, -0x1.692f2260040dcp+64},
    {-W(4537996028834282755, 16911910869488083494u), 5131199888064844945u, -0x1.c4cf20b637629p+63},
    {W(9, 9461051791380275814u), 777u, 0x1.912e85d82bf36p+57},
    {-W(36, 11060671286553274066u), 31u, -0x1.2e3dea8393c10p+64},
    {-W(46, 11316827769570550605u), 867u, -0x1.b86f84af02dc9p+59},
    {-W(10, 14508333147166099838u), 982u, -0x1.67ee445177610p+57},
    {W(56, 965181487211582687), 950u, 0x1.e359185e69f01p+59},
    {W(37, 13076881145020861865u), 385u, 0x1.912efa6fa00a5p+60},
};

// Intent: w / n is rounded once, exactly as Python's int / int true division
// rounds it (correctly, ties to even), including ties and the range's ends.
TEST_CASE("wide sum: division rounded once, as Python's int / int") {
  for (const DivisionCase& c : kDivisions) {
    INFO("n " << c.n << " expected " << c.expected);
    CHECK(WideSum::DivideRounded(c.w, c.n) == c.expected);
  }
  CHECK(WideSum::DivideRounded(0, 5) == 0.0);
}

// Intent: hi + lo is the integer as closely as two doubles hold it: hi is
// the nearest double and lo the exact remainder when it fits 53 bits.
TEST_CASE("wide sum: split into two doubles") {
  double hi, lo;
  // Python: float(2**64 - 1) == 2.0**64, remainder -1.
  WideSum::Split(W(0, UINT64_MAX), &hi, &lo);
  CHECK(hi == 0x1p64);
  CHECK(lo == -1.0);
  // Python: float(2**127 - 1) == 2.0**127 (one past the WideInt range), remainder -1.
  WideSum::Split(kWideMax, &hi, &lo);
  CHECK(hi == 0x1p127);
  CHECK(lo == -1.0);
  WideSum::Split(kWideMin, &hi, &lo);
  CHECK(hi == -0x1p127);
  CHECK(lo == 0.0);
  // Python: float(3 * (2**64 - 1)) == 55340232221128654848.0, remainder -3.
  WideSum::Split(W(2, UINT64_MAX - 2), &hi, &lo);
  CHECK(hi == 55340232221128654848.0);
  CHECK(lo == -3.0);
}

// Intent: Add is exact across the 64-bit boundaries and refuses (leaving
// the total as it was) only past the 128-bit range.
TEST_CASE("wide sum: exact addition and its overflow") {
  WideSum s;
  // Python: sum([2**64 - 1] * 3) == 55340232221128654845
  for (int i = 0; i < 3; ++i) REQUIRE(s.Add(static_cast<WideInt>(UINT64_MAX)));
  CHECK(s.total() == W(2, UINT64_MAX - 2));
  // Python: (2**64 - 1) * 3 + 3 * -2**63 == 27670116110564327421
  for (int i = 0; i < 3; ++i) REQUIRE(s.Add(static_cast<WideInt>(INT64_MIN)));
  CHECK(s.total() == W(1, 9223372036854775805u));
  WideSum top;
  REQUIRE(top.Add(kWideMax));
  CHECK_FALSE(top.Add(1));
  CHECK(top.total() == kWideMax);
}

// Intent: the 16-byte encoding round trips, and a decoded total larger than
// n integers of [-2^63, 2^64) could sum to is refused.
TEST_CASE("wide sum: encoding and its bound") {
  for (WideInt v : {WideInt{0}, WideInt{-1}, W(2, UINT64_MAX - 2), -W(1, 0)}) {
    WideSum s;
    REQUIRE(s.Add(v));
    std::string bytes;
    ByteWriter w(&bytes);
    s.Encode(w);
    CHECK(bytes.size() == 16);
    WideSum back;
    ByteReader r(bytes);
    REQUIRE(back.Decode(r, 3));
    CHECK(back.total() == v);
    ByteReader again(bytes);
    // |2^65 + 2^64 - 3| > 1 * 2^64: one integer cannot sum to it.
    if (v == W(2, UINT64_MAX - 2)) CHECK_FALSE(back.Decode(again, 1));
  }
  WideSum s;
  std::string cut(15, '\0');
  ByteReader r(cut);
  CHECK_FALSE(s.Decode(r, 1));
}

}  // namespace
}  // namespace fanfold
