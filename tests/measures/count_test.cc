// CountState and ExtremeState: the exact measures — count, count_present,
// min, max.
#include "common/measures/count.h"

#include <doctest/doctest.h>

#include <cmath>

#include "common/measures/extreme.h"
#include "tests/measures/measure_test_util.h"

namespace fanfold {
namespace {

using testing::Rows;

MeasureConfig Config(MeasureKind kind) {
  MeasureConfig c;
  c.kind = kind;
  return c;
}

Rows Mixed() {
  Rows rows;
  rows.AddNumber(3);
  rows.Add(Value::Missing());
  rows.AddString("-7.25");
  rows.Add(Value::Null());
  rows.AddString("x");
  rows.Add(Value::Bool(false));
  rows.AddNumber(12);
  rows.Add(Value::Other());
  return rows;
}

// Intent: count counts records, count_present those neither missing nor
// null (bools, text and objects are present), both as Int.
TEST_CASE("count: records and present values") {
  Rows rows = Mixed();
  Cell all = testing::FinalOf(*testing::Whole(Config(MeasureKind::kCount), rows))[0];
  Cell present = testing::FinalOf(*testing::Whole(Config(MeasureKind::kCountPresent), rows))[0];
  CHECK(all.kind == Cell::Kind::kInt);
  CHECK(all.integer == 8);
  CHECK(present.integer == 6);
  CHECK(testing::FinalOf(*NewMeasureState(Config(MeasureKind::kCount)))[0].integer == 0);
  // kCount takes no arguments: Add(nullptr) is its contract.
  auto s = NewMeasureState(Config(MeasureKind::kCount));
  CHECK(s->Add(nullptr));
  CHECK(testing::FinalOf(*s)[0].integer == 1);
}

// Intent: min/max use numbers and numeric text, skip the rest (counted),
// and give Null when nothing usable came.
TEST_CASE("min/max: numeric view and skipped") {
  Rows rows = Mixed();
  auto mn = testing::Whole(Config(MeasureKind::kMin), rows);
  auto mx = testing::Whole(Config(MeasureKind::kMax), rows);
  CHECK(testing::FinalOf(*mn)[0].number == -7.25);
  CHECK(testing::FinalOf(*mx)[0].number == 12);
  CHECK(mn->skipped() == 5);
  Rows none;
  none.AddString("nan");  // NaN is not a usable number
  CHECK(testing::FinalOf(*testing::Whole(Config(MeasureKind::kMax), none))[0].kind == Cell::Kind::kNull);
  // -0.0 and 0.0 tie whatever their order: always 0.0.
  Rows zeros;
  zeros.AddNumber(-0.0);
  zeros.AddNumber(0.0);
  CHECK_FALSE(std::signbit(testing::FinalOf(*testing::Whole(Config(MeasureKind::kMin), zeros))[0].number));
}

// The Int a min/max finalizes to. REQUIREs an Int cell.
WideInt IntOf(const MeasureState& s) {
  const Cell c = testing::FinalOf(s).at(0);
  REQUIRE(c.kind == Cell::Kind::kInt);
  return c.integer;
}

// Intent: min/max keep 64-bit integers exactly and compare them exactly
// with doubles, as Python's min/max over int and float do (ties keep the
// earlier value, as Python's do), whole and split.
TEST_CASE("min/max: 64-bit integers exactly, against doubles") {
  Rows rows;
  rows.Add(Value::Int(int64_t{1} << 53));
  rows.Add(Value::Int((int64_t{1} << 53) + 1));
  rows.AddNumber(9007199254740992.0);
  // Python: max([2**53, 2**53+1, 9007199254740992.0]) == 9007199254740993
  CHECK(IntOf(*testing::Whole(Config(MeasureKind::kMax), rows)) == (WideInt{1} << 53) + 1);
  Rows low;
  low.Add(Value::Int(INT64_MIN + 1));
  low.AddNumber(-0x1p63);
  low.AddString("-9223372036854775807");  // CSV cell: -2^63 + 1
  // Python: min([-2**63 + 1, float(-2**63), -2**63 + 1]) == -9.223372036854776e+18 (the float)
  Cell mn = testing::FinalOf(*testing::Whole(Config(MeasureKind::kMin), low)).at(0);
  CHECK(mn.kind == Cell::Kind::kFloat);
  CHECK(mn.number == -0x1p63);
  Rows top;
  top.Add(Value::Uint(UINT64_MAX));
  top.AddNumber(18446744073709549568.0);  // the largest double below 2^64
  top.AddString("18446744073709551615");
  // Python: max([2**64-1, 18446744073709549568.0]) == 18446744073709551615
  CHECK(IntOf(*testing::Whole(Config(MeasureKind::kMax), top)) == static_cast<WideInt>(UINT64_MAX));
  top.AddNumber(0x1p64);
  // Python: max([2**64-1, 2.0**64]) == 1.8446744073709552e+19 (the float)
  CHECK(testing::FinalOf(*testing::Whole(Config(MeasureKind::kMax), top)).at(0).kind == Cell::Kind::kFloat);
  // Python: min([5, 5.0]) == 5 and min([5.0, 5]) == 5.0: the earlier of equals.
  Rows five;
  five.Add(Value::Int(5));
  five.AddNumber(5.0);
  CHECK(testing::FinalOf(*testing::Whole(Config(MeasureKind::kMin), five)).at(0).kind == Cell::Kind::kInt);
  Rows five_double;
  five_double.AddNumber(5.0);
  five_double.Add(Value::Int(5));
  CHECK(testing::FinalOf(*testing::Whole(Config(MeasureKind::kMin), five_double)).at(0).kind == Cell::Kind::kFloat);
  // Split and merged in order: the same state, byte for byte.
  testing::TestLcg g(8);
  for (MeasureKind kind : {MeasureKind::kMin, MeasureKind::kMax}) {
    const std::string whole = testing::EncodeOf(*testing::Whole(Config(kind), top));
    for (int shards : {2, 3, 4}) CHECK(testing::EncodeOf(*testing::SplitMerged(Config(kind), top, shards, g)) == whole);
  }
}

// Intent: the exact encoding round trips and refuses what Add never keeps:
// a uint64 tag on a value that fits int64, -0.0, NaN.
TEST_CASE("min/max: exact encoding") {
  Rows rows;
  rows.Add(Value::Uint(UINT64_MAX));
  auto mx = testing::Whole(Config(MeasureKind::kMax), rows);
  const std::string bytes = testing::EncodeOf(*mx);
  CHECK(bytes == std::string("\x00\x01u\xff\xff\xff\xff\xff\xff\xff\xff", 11));
  CHECK(IntOf(*testing::DecodeOf(Config(MeasureKind::kMax), bytes)) == static_cast<WideInt>(UINT64_MAX));
  auto fresh = NewMeasureState(Config(MeasureKind::kMax));
  const std::string small_uint("\x00\x01u\x05\x00\x00\x00\x00\x00\x00\x00", 11);
  ByteReader r1(small_uint);
  CHECK(fresh->Decode(r1).code() == Status::Code::kCorrupt);
  const std::string minus_zero("\x00\x01n\x00\x00\x00\x00\x00\x00\x00\x80", 11);
  ByteReader r2(minus_zero);
  CHECK(fresh->Decode(r2).code() == Status::Code::kCorrupt);
  const std::string int_tag("\x00\x01i\xff\xff\xff\xff\xff\xff\xff\xff", 11);  // -1
  ByteReader r3(int_tag);
  REQUIRE(fresh->Decode(r3).ok());
  CHECK(IntOf(*fresh) == -1);
}

// Intent: splits merged in order give exactly the whole input's state.
TEST_CASE("count, min, max: merge of splits is exact") {
  testing::TestLcg g(21);
  Rows rows;
  for (int i = 0; i < 5000; ++i) {
    if (g.Next() % 5 == 0)
      rows.Add(Value::Null());
    else
      rows.AddNumber((g.Uniform() - 0.5) * 1e6);
  }
  for (MeasureKind kind : {MeasureKind::kCount, MeasureKind::kCountPresent, MeasureKind::kMin, MeasureKind::kMax}) {
    const std::string whole = testing::EncodeOf(*testing::Whole(Config(kind), rows));
    for (int shards : {2, 8, 100}) CHECK(testing::EncodeOf(*testing::SplitMerged(Config(kind), rows, shards, g)) == whole);
  }
}

}  // namespace
}  // namespace fanfold
