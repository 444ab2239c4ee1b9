// SumState: Neumaier compensated summation against worked examples and
// Python's math.fsum (correctly rounded), whole and split over shards.
#include "common/measures/sum.h"

#include <doctest/doctest.h>

#include <cfloat>
#include <cmath>

#include "tests/measures/measure_test_util.h"

namespace fanfold {
namespace {

using testing::Rows;

MeasureConfig SumConfig() {
  MeasureConfig c;
  c.kind = MeasureKind::kSum;
  return c;
}

double FinalNumber(const MeasureState& s) {
  auto cells = testing::FinalOf(s);
  REQUIRE(cells.size() == 1);
  REQUIRE(cells[0].kind == Cell::Kind::kFloat);
  return cells[0].number;
}

// Intent: the worked example [1, 1e100, 1, -1e100] sums to 2 (Neumaier 1974;
// Python math.fsum also gives 2), where naive and Kahan summation give 0.
TEST_CASE("sum: Neumaier worked example") {
  const double xs[] = {1.0, 1e100, 1.0, -1e100};
  Rows rows;
  for (double x : xs) rows.AddNumber(x);
  CHECK(FinalNumber(*testing::Whole(SumConfig(), rows)) == 2.0);
  // The same cut one value per shard, merged in order.
  testing::TestLcg rng(3);
  for (int shards : {2, 3, 4, 5}) CHECK(FinalNumber(*testing::SplitMerged(SumConfig(), rows, shards, rng)) == 2.0);
  // Discrimination: naive and Kahan (1965, CACM 8) summation give 0 where
  // Neumaier (1974, ZAMM 54) gives 2; Python's math.fsum also gives 2.
  double naive = 0, kahan = 0, c = 0;
  for (double x : xs) {
    naive += x;
    const double y = x - c, t = kahan + y;
    c = (t - kahan) - y;
    kahan = t;
  }
  CHECK(naive == 0.0);
  CHECK(kahan == 0.0);
}

// 3000 blocks of a large B, three small values and -B, from TestLcg(11).
// Python twin (with the Lcg of measure_test_util.h):
//   for i in range(3000):
//     B = math.ldexp(g.next(), 20 + g.next() % 10); xs.append(B)
//     for k in range(3): xs.append(math.ldexp(g.next() - 2**30, -(g.next() % 30)))
//     xs.append(-B)
Rows BlockData() {
  testing::TestLcg g(11);
  Rows rows;
  for (int i = 0; i < 3000; ++i) {
    const double b = std::ldexp(static_cast<double>(g.Next()), 20 + static_cast<int>(g.Next() % 10));
    rows.AddNumber(b);
    for (int k = 0; k < 3; ++k) {
      const double v = static_cast<double>(static_cast<int64_t>(g.Next()) - (int64_t{1} << 30));
      rows.AddNumber(std::ldexp(v, -static_cast<int>(g.Next() % 30)));
    }
    rows.AddNumber(-b);
  }
  return rows;
}

// Values computed with Python 3.11 on the same data: math.fsum(xs) and
// math.fsum(abs(x) for x in xs). Naive left-to-right summation gives
// -10441464368.0625 (relative error 9e-8).
constexpr double kFsum = -10441465327.662815;
constexpr double kSumAbs = 6.27454981936853e+20;

// Neumaier's bound: |result - S| <= 2u|S| + O(n u^2) sum|x| (Neumaier 1974;
// also Higham, Accuracy and Stability of Numerical Algorithms, 2002, 4.3,
// from memory). We allow 2u|S| + 10 n u^2 sum|x|, u = 2^-53.
double NeumaierBound(size_t n) {
  const double u = DBL_EPSILON / 2;
  return 2 * u * std::fabs(kFsum) + 10 * static_cast<double>(n) * u * u * kSumAbs;
}

// Intent: on data with 6e10 : 1 cancellation, the compensated sum meets
// Neumaier's bound against math.fsum, where naive summation is 1e3 off.
TEST_CASE("sum: cancellation-heavy data against math.fsum, whole") {
  Rows rows = BlockData();
  REQUIRE(rows.size() == 15000);
  const double got = FinalNumber(*testing::Whole(SumConfig(), rows));
  CHECK(std::fabs(got - kFsum) <= NeumaierBound(rows.size()));
  double naive = 0;
  for (size_t i = 0; i < rows.size(); ++i) naive += rows.args(i)[0].number;
  CHECK(std::fabs(naive - kFsum) > 100 * NeumaierBound(rows.size()));  // the data discriminates
}

// Intent: split into shards and merged in order, the bound still holds (each
// merge is one more compensated addition of a partial sum).
TEST_CASE("sum: cancellation-heavy data against math.fsum, split") {
  Rows rows = BlockData();
  testing::TestLcg rng(9);
  for (int shards : {2, 5, 17, 64}) {
    for (int trial = 0; trial < 4; ++trial) {
      INFO("shards " << shards);
      const double got = FinalNumber(*testing::SplitMerged(SumConfig(), rows, shards, rng));
      CHECK(std::fabs(got - kFsum) <= NeumaierBound(rows.size() + shards));
    }
  }
}

// The exact integer a sum finalizes to. REQUIREs an Int cell.
WideInt FinalInteger(const MeasureState& s) {
  auto cells = testing::FinalOf(s);
  REQUIRE(cells.size() == 1);
  REQUIRE(cells[0].kind == Cell::Kind::kInt);
  return cells[0].integer;
}

// Integers around 2^53, 2^63 and 2^64-1, of both signs, as JSON and CSV
// readers give them: exact Values and integer text.
Rows BigIntegerRows() {
  Rows rows;
  rows.Add(Value::Int(INT64_MAX));
  rows.Add(Value::Int(INT64_MAX));
  rows.Add(Value::Uint(UINT64_MAX));
  rows.Add(Value::Int(INT64_MIN));
  rows.Add(Value::Int((int64_t{1} << 53) + 1));
  rows.AddString("18446744073709551615");  // CSV cell: 2^64 - 1
  rows.AddString("-9007199254740993");      // CSV cell: -(2^53 + 1)
  rows.Add(Value::Int(-1));
  return rows;
}

// Intent: integers sum exactly into an Int, also past 2^64 and across
// shards, where a double sum (even compensated: each value is rounded on
// the way in) loses the low digits.
TEST_CASE("sum: 64-bit integers sum exactly, whole and split") {
  // Python: sum([2**63-1, 2**63-1]) == 18446744073709551614
  Rows two;
  two.Add(Value::Int(INT64_MAX));
  two.Add(Value::Int(INT64_MAX));
  CHECK(FinalInteger(*testing::Whole(SumConfig(), two)) == (static_cast<WideInt>(UINT64_MAX) - 1));
  // Python: sum([2**63-1, 2**63-1, 2**64-1, -2**63, 2**53+1, 2**64-1, -(2**53+1), -1])
  //         == 46116860184273879035
  const WideInt expected = (static_cast<WideInt>(2) << 64) + 9223372036854775803;
  Rows rows = BigIntegerRows();
  CHECK(FinalInteger(*testing::Whole(SumConfig(), rows)) == expected);
  testing::TestLcg rng(17);
  for (int shards : {2, 3, 5, 8}) CHECK(FinalInteger(*testing::SplitMerged(SumConfig(), rows, shards, rng)) == expected);
  // Discrimination: the double sum of the same values is not the integer.
  double naive = 0;
  for (size_t i = 0; i < rows.size(); ++i) {
    double x;
    REQUIRE(rows.args(i)[0].AsNumber(&x));
    naive += x;
  }
  CHECK(static_cast<WideInt>(naive) != expected);
}

// Intent: once a non-integer arrives the result is the Float of the exact
// integer part plus the compensated double part, rounded once at the end,
// whatever the split and wherever the non-integer falls.
TEST_CASE("sum: integers with a non-integer give the rounded exact total") {
  Rows rows;
  rows.Add(Value::Int((int64_t{1} << 53) + 1));
  rows.Add(Value::Int((int64_t{1} << 53) + 1));
  rows.AddNumber(0.5);
  // Python: float(Fraction(2**53+1) * 2 + Fraction(1, 2)) == 1.8014398509481988e+16
  // (plain float addition gives 1.8014398509481984e+16).
  CHECK(FinalNumber(*testing::Whole(SumConfig(), rows)) == 1.8014398509481988e+16);
  testing::TestLcg rng(5);
  for (int shards : {2, 3, 4})
    CHECK(FinalNumber(*testing::SplitMerged(SumConfig(), rows, shards, rng)) == 1.8014398509481988e+16);
  // Python: float(Fraction(3 * (2**64-1)) + Fraction(-0.25)) == 5.5340232221128655e+19
  Rows wide;
  for (int i = 0; i < 3; ++i) wide.Add(Value::Uint(UINT64_MAX));
  wide.AddString("-0.25");
  CHECK(FinalNumber(*testing::Whole(SumConfig(), wide)) == 5.5340232221128655e+19);
}

// Intent: the integer part encodes exactly (16 bytes, only when non-zero),
// and a state whose integer part is beyond what n values can reach, or
// whose flags are unknown, is refused.
TEST_CASE("sum: integer part encoding") {
  Rows rows = BigIntegerRows();
  auto s = testing::Whole(SumConfig(), rows);
  const std::string bytes = testing::EncodeOf(*s);
  auto back = testing::DecodeOf(SumConfig(), bytes);
  CHECK(testing::EncodeOf(*back) == bytes);
  CHECK(FinalInteger(*back) == FinalInteger(*s));
  // skipped 0, n 8, flags 2 (integer part), then 16 bytes.
  REQUIRE(bytes.size() == 3 + 16);
  CHECK(bytes[2] == 2);
  std::string bad_flags = bytes;
  bad_flags[2] = 4;
  auto fresh = NewMeasureState(SumConfig());
  ByteReader r1(bad_flags);
  CHECK(fresh->Decode(r1).code() == Status::Code::kCorrupt);
  std::string too_big = bytes;
  too_big[1] = 1;  // n = 1: one integer cannot sum to 2^65 and more
  ByteReader r2(too_big);
  CHECK(fresh->Decode(r2).code() == Status::Code::kCorrupt);
  // Integers summing to 0 encode no integer part: flags 0.
  Rows zero;
  zero.Add(Value::Int(5));
  zero.Add(Value::Int(-5));
  const std::string z = testing::EncodeOf(*testing::Whole(SumConfig(), zero));
  CHECK(z == std::string("\x00\x02\x00", 3));
  CHECK(FinalInteger(*testing::DecodeOf(SumConfig(), z)) == 0);
}

// Intent: the float part's bytes, fixed by the documented layout (sum.h)
// and IEEE 754 binary64 little-endian: 0.75 = 0x3FE8000000000000 (as
// Python's struct.pack('<d', 0.75) gives), correction 0.0 = eight zero bytes.
TEST_CASE("sum: integer and float parts encoding") {
  Rows rows;
  rows.Add(Value::Null());  // skipped
  rows.AddNumber(0.5);
  rows.Add(Value::Int(3));
  rows.AddNumber(0.25);
  const std::string bytes = testing::EncodeOf(*testing::Whole(SumConfig(), rows));
  std::string want("\x01\x03\x03", 3);           // skipped 1, n 3, flags 3
  want += std::string("\x03", 1) + std::string(15, '\0');  // integer part 3
  want += std::string("\0\0\0\0\0\0\xE8\x3F", 8);  // sum 0.75
  want += std::string(8, '\0');                  // correction 0
  CHECK(bytes == want);
}

// Intent: the integer part's overflow (more than 2^63 values: reached here
// by merging two decoded states) is defined: the result becomes the Float
// of the whole sum, not a wrapped integer.
TEST_CASE("sum: integer part overflow falls back to the double sum") {
  // n = 3 * 2^61 integers summing to 3 * 2^125 (within n * 2^64), twice.
  std::string bytes;
  ByteWriter w(&bytes);
  w.Varint(0);                    // skipped
  w.Varint(uint64_t{3} << 61);    // n
  w.U8(2);                        // flags: integer part
  w.U64(0);
  w.U64(uint64_t{3} << 61);       // 3 * 2^125, little-endian halves
  auto a = testing::DecodeOf(SumConfig(), bytes);
  CHECK(FinalInteger(*a) == static_cast<WideInt>(3) << 125);
  auto b = testing::DecodeOf(SumConfig(), bytes);
  REQUIRE(a->Merge(*b).ok());
  // Python: float(2 * 3 * 2**125) == 2.5521177519070385e+38 (past 2^127: no WideInt holds it)
  CHECK(FinalNumber(*a) == 2.5521177519070385e+38);
  CHECK(FinalNumber(*testing::DecodeOf(SumConfig(), testing::EncodeOf(*a))) == 2.5521177519070385e+38);
}

// Intent: no usable value gives Null; unusable values are skipped and
// counted; NaN text is skipped too; infinities propagate as in IEEE.
TEST_CASE("sum: empty, skipped, infinities") {
  Rows rows;
  rows.Add(Value::Null());
  rows.AddString("abc");
  rows.AddString("nan");  // parses, but a NaN would poison every later sum
  auto s = testing::Whole(SumConfig(), rows);
  CHECK(testing::FinalOf(*s)[0].kind == Cell::Kind::kNull);
  CHECK(s->skipped() == 3);
  rows.AddString("+1.5");
  rows.AddNumber(2);
  CHECK(FinalNumber(*testing::Whole(SumConfig(), rows)) == 3.5);
  rows.AddNumber(INFINITY);
  CHECK(FinalNumber(*testing::Whole(SumConfig(), rows)) == INFINITY);
  rows.AddNumber(-INFINITY);
  CHECK(std::isnan(FinalNumber(*testing::Whole(SumConfig(), rows))));
  // Overflow: DBL_MAX + DBL_MAX is inf, as a plain sum would be.
  Rows big;
  big.AddNumber(DBL_MAX);
  big.AddNumber(DBL_MAX);
  CHECK(FinalNumber(*testing::Whole(SumConfig(), big)) == INFINITY);
}

}  // namespace
}  // namespace fanfold
