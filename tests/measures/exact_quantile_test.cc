// ExactQuantileState: Hyndman & Fan (1996) type 7 against the paper's
// worked example and Python's statistics.quantiles(method='inclusive').
#include "common/measures/exact_quantile.h"

#include <doctest/doctest.h>

#include <cmath>

#include "tests/measures/measure_test_util.h"

namespace fanfold {
namespace {

using testing::Rows;

MeasureConfig QuantileConfig(std::vector<double> ps, uint64_t limit = 1'000'000) {
  MeasureConfig c;
  c.kind = MeasureKind::kQuantile;
  c.probabilities = std::move(ps);
  c.limit = limit;
  return c;
}

// Cut points i/k for i = 1..k-1, as statistics.quantiles(n=k) reports them.
std::vector<double> CutPoints(int k) {
  std::vector<double> ps;
  for (int i = 1; i < k; ++i) ps.push_back(static_cast<double>(i) / k);
  return ps;
}

std::vector<double> Numbers(const std::vector<Cell>& cells) {
  std::vector<double> out;
  for (const Cell& c : cells) {
    REQUIRE(c.kind == Cell::Kind::kFloat);
    out.push_back(c.number);
  }
  return out;
}

// TestLcg(7): x = ((next() % 200001) - 100000) / 8, exact in binary.
Rows QuantileData(size_t n) {
  testing::TestLcg g(7);
  Rows rows;
  for (size_t i = 0; i < n; ++i)
    rows.AddNumber(static_cast<double>(static_cast<int64_t>(g.Next() % 200001) - 100000) / 8.0);
  return rows;
}

// Computed with Python 3.11 statistics.quantiles(data, n=k, method='inclusive')
// on QuantileData: the first 10 values with n=4, the first 37 with n=10, all
// 1003 with n=100.
const double kPy4Of10[] = {-6436.65625, -4137.5, 6115.4375};
const double kPy10Of37[] = {-7804.375, -6147.25, -4033.7, -972.95, 835.375, 3099.675, 5528.2, 8491.075, 10270.75};
const double kPy100Of1003[] = {
    -12280.5675, -12115.025, -11804.38, -11551.2, -11246.1375, -11043.465, -10902.76, -10598.47,
    -10358.125, -10096.675, -9829.2125, -9519.225, -9247.87, -9023.135, -8760.85, -8553.79,
    -8292.6, -8030.06, -7800.98, -7631.025, -7360.2625, -7131.655, -6959.71, -6592.565, -6396.75,
    -6191.82, -5878.2775, -5691.5, -5406.36, -5221.2, -4884.9975, -4675.51, -4543.51, -4256.48,
    -3978.75, -3794.635, -3571.4075, -3426.14, -3103.16, -2799.65, -2638.2, -2391.885, -2191.5225,
    -1942.86, -1780.825, -1653.115, -1356.1, -1038.37, -855.1975, -604.0, -329.865, -192.215,
    -82.7325, 175.525, 355.975, 533.27, 717.755, 899.375, 1372.5325, 1740.0, 1956.1025, 2109.42,
    2390.8525, 2525.96, 2683.8125, 3014.1, 3208.955, 3641.22, 3859.11, 4181.9, 4425.9125, 4704.505,
    4907.825, 5206.52, 5448.8125, 5669.975, 5884.675, 6330.5, 6658.1325, 6993.725, 7329.105,
    7490.2, 7684.8725, 7898.295, 8162.35, 8456.405, 8704.4875, 8978.425, 9214.31, 9433.825,
    9615.515, 9946.025, 10365.1025, 10698.425, 11006.4625, 11265.535, 11570.88, 11751.59,
    12175.9425
};

// Python computes j + delta/k exactly in integers and we compute (n-1)p in
// floating point, so the two may differ by rounding: |x| <= 12500 here.
void CheckClose(const std::vector<double>& got, const double* want, size_t count) {
  REQUIRE(got.size() == count);
  for (size_t i = 0; i < count; ++i) {
    INFO("cut point " << i + 1);
    CHECK(std::fabs(got[i] - want[i]) <= 1e-9);
  }
}

// Intent: the Hyndman & Fan (1996) worked example x = 1..8 has quartiles
// 2.75, 4.5, 6.25; p = 0 and 1 give the extremes.
TEST_CASE("quantile: Hyndman & Fan type 7 worked example") {
  Rows rows;
  for (int i = 8; i >= 1; --i) rows.AddNumber(i);  // input order must not matter
  auto s = testing::Whole(QuantileConfig({0.25, 0.5, 0.75, 0, 1}), rows);
  const std::vector<double> got = Numbers(testing::FinalOf(*s));
  CHECK(got == std::vector<double>{2.75, 4.5, 6.25, 1, 8});
}

// Intent: agreement with Python's statistics.quantiles(method='inclusive')
// on generated data with negatives, duplicates and interpolation.
TEST_CASE("quantile: against Python statistics.quantiles inclusive") {
  CheckClose(Numbers(testing::FinalOf(*testing::Whole(QuantileConfig(CutPoints(4)), QuantileData(10)))),
             kPy4Of10, 3);
  CheckClose(Numbers(testing::FinalOf(*testing::Whole(QuantileConfig(CutPoints(10)), QuantileData(37)))),
             kPy10Of37, 9);
  Rows all = QuantileData(1003);
  CheckClose(Numbers(testing::FinalOf(*testing::Whole(QuantileConfig(CutPoints(100)), all))),
             kPy100Of1003, 99);
  // And split over shards: the merged state is the same multiset, so the
  // encoding (sorted values) and the result are identical.
  testing::TestLcg rng(5);
  const std::string whole = testing::EncodeOf(*testing::Whole(QuantileConfig(CutPoints(100)), all));
  for (int shards : {2, 6, 31}) {
    auto merged = testing::SplitMerged(QuantileConfig(CutPoints(100)), all, shards, rng);
    CHECK(testing::EncodeOf(*merged) == whole);
    CheckClose(Numbers(testing::FinalOf(*merged)), kPy100Of1003, 99);
  }
}

// Intent: one value, duplicates, infinities and empty input behave.
TEST_CASE("quantile: edge cases") {
  Rows one;
  one.AddNumber(3.5);
  CHECK(Numbers(testing::FinalOf(*testing::Whole(QuantileConfig({0, 0.3, 1}), one))) ==
        std::vector<double>{3.5, 3.5, 3.5});
  Rows inf;
  inf.AddNumber(INFINITY);
  inf.AddNumber(INFINITY);
  inf.AddNumber(1);
  // Type 7 between equal neighbours is the neighbour, not inf - inf.
  CHECK(Numbers(testing::FinalOf(*testing::Whole(QuantileConfig({0.75}), inf)))[0] == INFINITY);
  Rows none;
  none.AddString("x");
  auto s = testing::Whole(QuantileConfig({0.5, 0.9}), none);
  auto cells = testing::FinalOf(*s);
  REQUIRE(cells.size() == 2);  // one cell per probability, in config order
  CHECK(cells[0].kind == Cell::Kind::kNull);
  CHECK(s->skipped() == 1);
}

// Intent: past `limit` values Add returns false and Merge fails with
// LimitExceeded naming the way out; decoding more than limit is corrupt.
TEST_CASE("quantile: limit") {
  const MeasureConfig config = QuantileConfig({0.5}, 5);
  auto s = NewMeasureState(config);
  const Value v = Value::Number(1);
  for (int i = 0; i < 5; ++i) CHECK(s->Add(&v));
  CHECK_FALSE(s->Add(&v));
  auto a = NewMeasureState(config);
  auto b = NewMeasureState(config);
  for (int i = 0; i < 3; ++i) {
    a->Add(&v);
    b->Add(&v);
  }
  const Status st = a->Merge(*b);
  CHECK(st.code() == Status::Code::kLimitExceeded);
  CHECK(st.message().find("\"limit\"") != std::string::npos);
  CHECK(st.message().find("ddsketch") != std::string::npos);
  // A state of 6 values, as a looser config would write it.
  auto big = NewMeasureState(QuantileConfig({0.5}, 6));
  for (int i = 0; i < 6; ++i) big->Add(&v);
  auto small = NewMeasureState(config);
  const std::string big_bytes = testing::EncodeOf(*big);
  ByteReader r(big_bytes);
  CHECK(small->Decode(r).code() == Status::Code::kCorrupt);
}

// Intent: hand-made encodings that Add could never produce are rejected.
TEST_CASE("quantile: non-canonical encodings are corrupt") {
  auto check = [](std::initializer_list<double> xs) {
    std::string bytes;
    ByteWriter w(&bytes);
    w.Varint(0);
    w.Varint(xs.size());
    for (double x : xs) w.F64(x);
    auto s = NewMeasureState(QuantileConfig({0.5}));
    ByteReader r(bytes);
    return s->Decode(r).code();
  };
  CHECK(check({1, 2, 3}) == Status::Code::kOk);
  CHECK(check({2, 1}) == Status::Code::kCorrupt);     // unsorted
  CHECK(check({NAN}) == Status::Code::kCorrupt);      // NaN is never kept
  CHECK(check({-0.0, 1}) == Status::Code::kCorrupt);  // -0.0 is kept as 0.0
}

}  // namespace
}  // namespace fanfold
