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
