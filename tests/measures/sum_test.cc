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
