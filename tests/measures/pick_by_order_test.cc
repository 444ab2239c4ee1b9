// PickByOrderState: ordering keys, tie rules within a state and across
// merges, skipped records.
#include "common/measures/pick_by_order.h"

#include <doctest/doctest.h>

#include "tests/measures/measure_test_util.h"

namespace fanfold {
namespace {

using testing::Rows;

MeasureConfig Config(MeasureKind kind) {
  MeasureConfig c;
  c.kind = kind;
  return c;
}

Cell Final(const MeasureState& s) { return testing::FinalOf(s).at(0); }

// Intent: first takes the smallest key, last the largest; numbers compare
// numerically (10 > 9, also as CSV text), strings bytewise, numbers before
// strings.
TEST_CASE("at_lowest/at_highest: key order") {
  Rows rows;
  rows.Add(Value::String("b"), Value::Number(10));
  rows.Add(Value::String("a"), Value::String("9"));  // numeric text: the number 9
  rows.Add(Value::String("c"), Value::String("2024-01-02T00:00:00Z"));
  rows.Add(Value::String("d"), Value::String("2024-01-01T00:00:00Z"));
  rows.Add(Value::String("e"), Value::Number(-1.5));
  CHECK(Final(*testing::Whole(Config(MeasureKind::kAtLowest), rows)).str == "e");
  CHECK(Final(*testing::Whole(Config(MeasureKind::kAtHighest), rows)).str == "c");
  // Without strings, last is the numerically largest (10, not "9").
  Rows numbers;
  numbers.Add(Value::String("ten"), Value::Number(10));
  numbers.Add(Value::String("nine"), Value::String("9"));
  CHECK(Final(*testing::Whole(Config(MeasureKind::kAtHighest), numbers)).str == "ten");
}

// Intent: on equal keys first keeps the earliest record and last the latest,
// within one state and across any split merged in shard order.
TEST_CASE("at_lowest/at_highest: ties by input order, also across merges") {
  Rows rows;
  for (int i = 0; i < 200; ++i)
    rows.Add(Value::Number(i), Value::Number(i % 3 == 0 ? 0 : 5));  // keys 0 and 5 repeat
  auto first = testing::Whole(Config(MeasureKind::kAtLowest), rows);
  auto last = testing::Whole(Config(MeasureKind::kAtHighest), rows);
  CHECK(Final(*first).number == 0);    // the earliest key-0 record
  CHECK(Final(*last).number == 199);   // the latest key-5 record (199 % 3 != 0)
  testing::TestLcg rng(3);
  for (int shards : {2, 7, 50, 300}) {
    CHECK(testing::EncodeOf(*testing::SplitMerged(Config(MeasureKind::kAtLowest), rows, shards, rng)) ==
          testing::EncodeOf(*first));
    CHECK(testing::EncodeOf(*testing::SplitMerged(Config(MeasureKind::kAtHighest), rows, shards, rng)) ==
          testing::EncodeOf(*last));
  }
}

// Intent: 64-bit integer keys order exactly (2^53 + 1 after 2^53, also
// against the double 2^53 and as CSV text), and integer values come back
// with every digit, as Python's min/max by key over int give them.
TEST_CASE("at_lowest/at_highest: 64-bit integer keys and values exactly") {
  Rows rows;
  rows.Add(Value::Uint(UINT64_MAX), Value::Int((int64_t{1} << 53) + 1));
  rows.Add(Value::Int(INT64_MIN), Value::Number(0x1p53));
  rows.Add(Value::String("text"), Value::String("9007199254740994"));  // CSV cell: 2^53 + 2
  rows.Add(Value::Int(-9007199254740993), Value::Int(int64_t{1} << 53));
  // Python: keys [2**53+1, 2.0**53, 2**53+2, 2**53]; max by key -> "text";
  // min by key: 2.0**53 == 2**53, the earlier (INT64_MIN) stays for at_lowest.
  CHECK(Final(*testing::Whole(Config(MeasureKind::kAtHighest), rows)).str == "text");
  Cell low = Final(*testing::Whole(Config(MeasureKind::kAtLowest), rows));
  REQUIRE(low.kind == Cell::Kind::kInt);
  CHECK(low.integer == INT64_MIN);
  rows.Add(Value::Int(7), Value::String("18446744073709551615"));  // the largest key, as text
  Cell high = Final(*testing::Whole(Config(MeasureKind::kAtHighest), rows));
  REQUIRE(high.kind == Cell::Kind::kInt);
  CHECK(high.integer == 7);
  // at_highest takes the later of equal keys: 2^53 (int) after 2.0^53.
  Rows ties;
  ties.Add(Value::Uint(UINT64_MAX), Value::Number(0x1p53));
  ties.Add(Value::Int(-9007199254740993), Value::Int(int64_t{1} << 53));
  Cell later = Final(*testing::Whole(Config(MeasureKind::kAtHighest), ties));
  CHECK(later.integer == -9007199254740993);
  testing::TestLcg rng(6);
  for (MeasureKind kind : {MeasureKind::kAtLowest, MeasureKind::kAtHighest}) {
    const std::string whole = testing::EncodeOf(*testing::Whole(Config(kind), rows));
    for (int shards : {2, 3, 5}) CHECK(testing::EncodeOf(*testing::SplitMerged(Config(kind), rows, shards, rng)) == whole);
    CHECK(testing::EncodeOf(*testing::DecodeOf(Config(kind), whole)) == whole);
  }
}

// Intent: a missing/null/bool key, or a missing/null/object value, skips
// the record (counted); a bool or number value is returned as such.
TEST_CASE("at_lowest/at_highest: skipped records and value kinds") {
  Rows rows;
  rows.Add(Value::String("no key"), Value::Missing());
  rows.Add(Value::String("null key"), Value::Null());
  rows.Add(Value::String("bool key"), Value::Bool(true));
  rows.Add(Value::Missing(), Value::Number(1));
  rows.Add(Value::Null(), Value::Number(1));
  rows.Add(Value::Other(), Value::Number(1));
  auto s = testing::Whole(Config(MeasureKind::kAtLowest), rows);
  CHECK(Final(*s).kind == Cell::Kind::kNull);
  CHECK(s->skipped() == 6);
  rows.Add(Value::Bool(false), Value::Number(3));
  rows.Add(Value::Number(2.5), Value::Number(4));
  CHECK(Final(*testing::Whole(Config(MeasureKind::kAtLowest), rows)).kind == Cell::Kind::kBool);
  Cell last = Final(*testing::Whole(Config(MeasureKind::kAtHighest), rows));
  CHECK(last.kind == Cell::Kind::kFloat);
  CHECK(last.number == 2.5);
}

}  // namespace
}  // namespace fanfold
