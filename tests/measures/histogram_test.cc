// Tests for the histogram measure: bins are [edge i, edge i+1) with values
// below and above the range counted, as Python's bisect.bisect_right over the
// edges places them (Python compares int with float exactly, as the state
// does); counts against collections.Counter; merges associative and
// independent of order; bins by width against Python's fractions.Fraction;
// the bin checks' messages.
#include "common/measures/histogram.h"

#include <doctest/doctest.h>

#include <cmath>
#include <limits>

#include "common/measures/histogram_bins.h"
#include "tests/measures/measure_test_util.h"

namespace fanfold {
namespace {

using testing::Rows;
using testing::TestLcg;

MeasureConfig ByEdges(std::vector<double> edges) {
  MeasureConfig c;
  c.kind = MeasureKind::kHistogram;
  c.edges = std::move(edges);
  return c;
}

MeasureConfig ByWidth(double from, double to, double width) {
  MeasureConfig c;
  c.kind = MeasureKind::kHistogram;
  c.from = from;
  c.to = to;
  c.width = width;
  return c;
}

std::vector<uint64_t> CountsOf(const MeasureState& s) { return dynamic_cast<const HistogramState&>(s).counts(); }

// Intent: edge values land in the bin they open, the last edge counts above,
// -0.0 is 0, infinities go below/above, numeric text is a number.
TEST_CASE("histogram: slots at the edges") {
  const std::vector<double> edges = {0, 10, 20, 50};
  const double inf = std::numeric_limits<double>::infinity();
  const std::vector<double> values = {-1, 0, 9.999, 10, 19, 20, 49.99, 50, 51, -0.0, inf, -inf};
  // Python: [bisect.bisect_right([0.0, 10.0, 20.0, 50.0], v) for v in
  // [-1, 0, 9.999, 10, 19, 20, 49.99, 50, 51, -0.0, inf, -inf]]
  const std::vector<size_t> python = {0, 1, 1, 2, 2, 3, 3, 4, 4, 1, 4, 0};
  for (size_t i = 0; i < values.size(); ++i) {
    INFO("value " << values[i]);
    CHECK(HistogramState::Slot(edges, Value::Number(values[i])) == python[i]);
  }
  HistogramState s(ByEdges(edges));
  Rows rows;
  for (double v : values) rows.AddNumber(v);
  rows.AddString("12");     // numeric text: bisect_right(E, 12) == 2
  rows.AddString("nan");    // skipped, as every numeric measure skips NaN
  rows.AddString("abc");    // skipped: not a number
  rows.Add(Value::Null());  // skipped
  rows.Add(Value::Missing());
  rows.Add(Value::Bool(true));
  for (size_t i = 0; i < rows.size(); ++i) s.Add(rows.args(i));
  // collections.Counter of the slots above plus 2: {0: 2, 1: 3, 2: 3, 3: 2, 4: 3}
  CHECK(s.counts() == std::vector<uint64_t>{2, 3, 3, 2, 3});
  CHECK(s.skipped() == 5);
  std::vector<Cell> cells;
  s.Finalize(&cells);
  REQUIRE(cells.size() == 5);
  CHECK(cells[2].kind == Cell::Kind::kInt);
  CHECK(cells[2].integer == 3);
}

// Intent: integers past 2^53 compare with the edges exactly. Python:
// E = [float(2**53 - 2), float(2**53), float(2**53 + 2), float(2**53 + 4)];
// [bisect.bisect_right(E, v) for v in range(2**53 - 3, 2**53 + 6)]
// == [0, 1, 1, 2, 2, 3, 3, 4, 4], whereas their nearest doubles give
// [0, 1, 1, 2, 2, 3, 4, 4, 4]: 2^53 + 3 would land above 2^53 + 4.
TEST_CASE("histogram: integers near 2^53 and 2^64 compare exactly") {
  const int64_t t = int64_t{1} << 53;
  const std::vector<double> edges = {static_cast<double>(t - 2), static_cast<double>(t), static_cast<double>(t + 2),
                                     static_cast<double>(t + 4)};
  const std::vector<size_t> python = {0, 1, 1, 2, 2, 3, 3, 4, 4};
  for (int64_t d = -3; d <= 5; ++d) {
    INFO("2^53 + " << d);
    CHECK(HistogramState::Slot(edges, Value::Int(t + d)) == python[static_cast<size_t>(d + 3)]);
  }
  // Python: E = [0.0, 2.0**63, 2.0**64];
  // [bisect.bisect_right(E, v) for v in [2**63 - 1, 2**63, 2**64 - 1, -2**63]] == [1, 2, 2, 0]
  const std::vector<double> wide = {0, 9223372036854775808.0, 18446744073709551616.0};
  CHECK(HistogramState::Slot(wide, Value::Int(INT64_MAX)) == 1);
  CHECK(HistogramState::Slot(wide, Value::Uint(uint64_t{1} << 63)) == 2);
  CHECK(HistogramState::Slot(wide, Value::Uint(UINT64_MAX)) == 2);
  CHECK(HistogramState::Slot(wide, Value::Int(INT64_MIN)) == 0);
  // Integer text is exact too: "9007199254740995" lies in [2^53 + 2, 2^53 + 4).
  Rows rows;
  rows.AddString("9007199254740995");
  HistogramState s(ByEdges(edges));
  s.Add(rows.args(0));
  CHECK(s.counts() == std::vector<uint64_t>{0, 0, 0, 1, 0});
}

// The 5000 values of the Python twin (TestLcg(7), the same draws):
//   r = nxt() % 4
//   0: int(nxt() % 300) - 150      1: (uni() - 0.5) * 300
//   2: float(nxt() % 16) / 4 - 2   3: E[nxt() % len(E)]  (an edge itself)
Rows RandomRows(const std::vector<double>& edges) {
  TestLcg g(7);
  Rows rows;
  for (int i = 0; i < 5000; ++i) {
    switch (g.Next() % 4) {
      case 0: rows.Add(Value::Int(static_cast<int64_t>(g.Next() % 300) - 150)); break;
      case 1: rows.AddNumber((g.Uniform() - 0.5) * 300); break;
      case 2: rows.AddNumber(static_cast<double>(g.Next() % 16) / 4 - 2); break;
      default: rows.AddNumber(edges[g.Next() % edges.size()]); break;
    }
  }
  return rows;
}

// Intent: counts equal collections.Counter(bisect.bisect_right(E, v) for v
// in values) on data that hits every edge; any split merged in any order or
// grouping gives the same state, byte for byte.
TEST_CASE("histogram: counts against collections.Counter; merges associative and order-free") {
  const std::vector<double> edges = {-50, -0.5, 0, 0.25, 1, 7.5, 100};
  const MeasureConfig c = ByEdges(edges);
  const Rows rows = RandomRows(edges);
  // Python: c = collections.Counter(bisect.bisect_right(E, v) for v in values);
  // [c[i] for i in range(8)]
  const std::vector<uint64_t> python = {857, 1050, 317, 227, 429, 584, 959, 577};
  auto whole = testing::Whole(c, rows);
  CHECK(CountsOf(*whole) == python);
  const std::string whole_bytes = testing::EncodeOf(*whole);

  // Three parts a, b, c: (a + b) + c, a + (b + c) and c + b + a.
  std::vector<std::unique_ptr<MeasureState>> parts;
  for (size_t p = 0; p < 3; ++p) {
    parts.push_back(NewMeasureState(c));
    for (size_t i = p; i < rows.size(); i += 3) parts.back()->Add(rows.args(i));
  }
  auto copy = [&](const MeasureState& s) {
    auto out = NewMeasureState(c);
    const std::string bytes = testing::EncodeOf(s);
    ByteReader r(bytes);
    REQUIRE(out->Decode(r).ok());
    return out;
  };
  auto left = copy(*parts[0]);
  REQUIRE(left->Merge(*parts[1]).ok());
  REQUIRE(left->Merge(*parts[2]).ok());
  auto right_tail = copy(*parts[1]);
  REQUIRE(right_tail->Merge(*parts[2]).ok());
  auto right = copy(*parts[0]);
  REQUIRE(right->Merge(*right_tail).ok());
  auto reversed = copy(*parts[2]);
  REQUIRE(reversed->Merge(*parts[1]).ok());
  REQUIRE(reversed->Merge(*parts[0]).ok());
  CHECK(testing::EncodeOf(*left) == whole_bytes);
  CHECK(testing::EncodeOf(*right) == whole_bytes);
  CHECK(testing::EncodeOf(*reversed) == whole_bytes);
  TestLcg rng(3);
  for (int shards : {2, 7, 50}) CHECK(testing::EncodeOf(*testing::SplitMerged(c, rows, shards, rng)) == whole_bytes);
}

// Intent: bins by width step in decimal. Python: n = (F(b) - F(a)) / F(w);
// [float(F(a) + i * F(w)) for i in range(n)] + [float(b)] with
// F = fractions.Fraction of the decimals as written.
TEST_CASE("histogram: bins by width against fractions.Fraction") {
  CHECK(HistogramEdges(ByWidth(0, 1, 0.1)) ==
        std::vector<double>{0.0, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 1.0});
  const std::vector<double> python = {-2.2, -2.1, -2.0, -1.9, -1.8, -1.7, -1.6, -1.5, -1.4, -1.3, -1.2, -1.1,
                                      -1.0, -0.9, -0.8, -0.7, -0.6, -0.5, -0.4, -0.3, -0.2, -0.1, 0.0,  0.1,
                                      0.2,  0.3,  0.4,  0.5,  0.6,  0.7,  0.8,  0.9,  1.0,  1.1,  1.2,  1.3,
                                      1.4,  1.5,  1.6,  1.7,  1.8,  1.9,  2.0,  2.1,  2.2};
  CHECK(HistogramEdges(ByWidth(-2.2, 2.2, 0.1)) == python);
  CHECK(HistogramEdges(ByWidth(0, 86400, 3600)).size() == 25);
  CHECK(HistogramColumns("t", ByWidth(0, 0.3, 0.1)) ==
        std::vector<std::string>{"t_below", "t_0_0.1", "t_0.1_0.2", "t_0.2_0.3", "t_above"});
  CHECK(HistogramColumns("x", ByEdges({-5, 2.5, 1e20})) ==
        std::vector<std::string>{"x_below", "x_-5_2.5", "x_2.5_1e+20", "x_above"});
}

// Intent: each rule of the bins names its key and says what is expected.
TEST_CASE("histogram: the bin checks") {
  auto complaint = [](const MeasureConfig& c) {
    std::optional<OptionComplaint> bad = CheckHistogramBins(c);
    REQUIRE(bad.has_value());
    return *bad;
  };
  CHECK(!CheckHistogramBins(ByEdges({0, 1})).has_value());
  CHECK(!CheckHistogramBins(ByWidth(0, 1, 0.1)).has_value());
  CHECK(complaint(ByEdges({})).key == "edges");
  CHECK(complaint(ByEdges({1})).expected == "at least 2 edges (one bin)");
  const OptionComplaint flat = complaint(ByEdges({0, 5, 5, 9}));
  CHECK(flat.key == "edges");
  CHECK(flat.index == 2);
  CHECK(flat.expected == "a number above the edge before it (5)");
  MeasureConfig both = ByEdges({0, 1});
  both.width = 1;
  CHECK(complaint(both).key == "width");
  MeasureConfig no_to = ByWidth(0, 1, 0.5);
  no_to.to = std::nan("");
  CHECK(complaint(no_to).key == "to");
  CHECK(complaint(ByWidth(0, 1, 0)).expected == "a bin width above 0");
  CHECK(complaint(ByWidth(0, 1, -1)).expected == "a bin width above 0");
  CHECK(complaint(ByWidth(1, 1, 1)).expected == "a number above \"from\" (1)");
  CHECK(complaint(ByWidth(0, 10, 3)).expected == "a width that divides to - from (10) into whole bins (here 3.3333333333333335 bins)");
  CHECK(complaint(ByWidth(0, 1000, 1)).expected == "a width giving at most 256 bins (here about 1000)");
  // Doubles near 1e17 are 16 apart: edges 1 apart cannot all be told apart.
  CHECK(complaint(ByWidth(1e17, 1e17 + 64, 1)).expected.find("can tell apart") != std::string::npos);
  CHECK(HistogramEdges(ByWidth(0, 10, 3)).empty());
}

// Intent: the decoder refuses slot counts of another config, gaps past the
// end and zero counts, and accepts the empty state.
TEST_CASE("histogram: strict decoding") {
  const MeasureConfig c = ByEdges({0, 1, 2});  // 4 slots
  auto decode = [&](std::string bytes) {
    HistogramState s(c);
    ByteReader r(bytes);
    return s.Decode(r).ok() && r.at_end();
  };
  CHECK(decode(std::string("\x00\x04\x00", 3)));             // empty
  CHECK(decode(std::string("\x02\x04\x02\x00\x05\x02\x01", 7)));  // slots 0 and 3
  CHECK(!decode(std::string("\x00\x05\x00", 3)));            // 5 slots: another config
  CHECK(!decode(std::string("\x00\x04\x01\x04\x01", 5)));    // slot 4 of 4
  CHECK(!decode(std::string("\x00\x04\x01\x00\x00", 5)));    // a zero count
  CHECK(!decode(std::string("\x00\x04\x05\x00\x01", 5)));    // more entries than bytes
}

}  // namespace
}  // namespace fanfold
