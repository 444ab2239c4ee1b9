// ExactDistinctState: exact distinct counts against Python, typed values,
// the limit, and canonical encodings.
#include "common/measures/exact_distinct.h"

#include <doctest/doctest.h>

#include "tests/measures/measure_test_util.h"

namespace fanfold {
namespace {

using testing::Rows;

MeasureConfig DistinctConfig(uint64_t limit = 1'000'000) {
  MeasureConfig c;
  c.kind = MeasureKind::kDistinct;
  c.limit = limit;
  return c;
}

// Intent: the count equals Python 3.11 len(set(...)) of (type, value) pairs
// of TypedValueData, which is 109, whole and split (identical encodings).
TEST_CASE("distinct: exact count matches Python set size") {
  Rows rows = testing::TypedValueData();
  auto whole = testing::Whole(DistinctConfig(), rows);
  CHECK(testing::FinalOf(*whole)[0].integer == 109);  // Python: len(set(vals)) == 109
  const std::string bytes = testing::EncodeOf(*whole);
  testing::TestLcg rng(2);
  for (int shards : {2, 3, 10, 64}) CHECK(testing::EncodeOf(*testing::SplitMerged(DistinctConfig(), rows, shards, rng)) == bytes);
}

// Intent: 64-bit ids stay apart (the example: 2^53+1 and 2^53 are
// two values, 2^64-1 keeps its own), equal numbers are one value however
// they came (5, 5.0, CSV "5"), as Python's len(set(...)) over int and float.
TEST_CASE("distinct: 64-bit integers exactly") {
  Rows rows;
  rows.Add(Value::Int(9007199254740993));
  rows.Add(Value::Int(9007199254740992));
  rows.Add(Value::Uint(UINT64_MAX));
  rows.Add(Value::Int(1));
  // Python: len({9007199254740993, 9007199254740992, 18446744073709551615, 1}) == 4
  CHECK(testing::FinalOf(*testing::Whole(DistinctConfig(), rows))[0].integer == 4);
  rows.AddNumber(9007199254740992.0);        // == 2^53: not new
  rows.AddString("18446744073709551615");    // text: a string, a value of its own
  rows.Add(Value::Int(INT64_MIN));
  rows.AddNumber(-0x1p63);                   // == -2^63: not new
  rows.Add(Value::Int(INT64_MIN + 1));
  // Python: len({2**53+1, 2**53, 2**64-1, 1, 2.0**53, -2**63, -2.0**63, -2**63+1}) == 6, plus the string
  auto whole = testing::Whole(DistinctConfig(), rows);
  CHECK(testing::FinalOf(*whole)[0].integer == 7);
  testing::TestLcg rng(12);
  for (int shards : {2, 3, 4})
    CHECK(testing::EncodeOf(*testing::SplitMerged(DistinctConfig(), rows, shards, rng)) == testing::EncodeOf(*whole));
}

// Intent: the number 1, the string "1", true, and the empty string are four
// values; 0.0 and -0.0 one; missing, null and objects are skipped.
TEST_CASE("distinct: typed values") {
  Rows rows;
  rows.AddNumber(1);
  rows.AddString("1");
  rows.Add(Value::Bool(true));
  rows.AddString("");
  rows.AddNumber(0.0);
  rows.AddNumber(-0.0);
  rows.AddString(std::string("a\0b", 3));  // embedded NUL: stored as bytes
  rows.AddString("a");
  rows.Add(Value::Missing());
  rows.Add(Value::Null());
  rows.Add(Value::Other());
  auto s = testing::Whole(DistinctConfig(), rows);
  CHECK(testing::FinalOf(*s)[0].integer == 7);
  CHECK(s->skipped() == 3);
}

// Intent: limit distinct values are fine; one more makes Add return false,
// and a merge whose union passes the limit fails with LimitExceeded that
// names the way out. Repeats of kept values never count against it.
TEST_CASE("distinct: limit") {
  auto s = NewMeasureState(DistinctConfig(3));
  for (double x : {1.0, 2.0, 3.0, 1.0, 3.0}) {
    const Value v = Value::Number(x);
    CHECK(s->Add(&v));
  }
  const Value four = Value::Number(4);
  CHECK_FALSE(s->Add(&four));

  auto a = NewMeasureState(DistinctConfig(3));
  auto b = NewMeasureState(DistinctConfig(3));
  for (double x : {1.0, 2.0}) {
    const Value v = Value::Number(x);
    a->Add(&v);
  }
  for (double x : {2.0, 3.0}) {
    const Value v = Value::Number(x);
    b->Add(&v);
  }
  CHECK(a->Merge(*b).ok());  // union {1, 2, 3}: at the limit, fine
  auto c = NewMeasureState(DistinctConfig(3));
  c->Add(&four);
  const Status st = a->Merge(*c);
  CHECK(st.code() == Status::Code::kLimitExceeded);
  CHECK(st.message().find("\"limit\"") != std::string::npos);
  CHECK(st.message().find("hyperloglog") != std::string::npos);
}

// Intent: duplicate or unsorted keys, malformed keys and counts past the
// limit are corrupt.
TEST_CASE("distinct: non-canonical encodings are corrupt") {
  auto decode = [](std::initializer_list<std::string> keys, uint64_t limit = 10) {
    std::string bytes;
    ByteWriter w(&bytes);
    w.Varint(0);
    w.Varint(keys.size());
    for (const std::string& k : keys) w.Str(k);
    auto s = NewMeasureState(DistinctConfig(limit));
    ByteReader r(bytes);
    return s->Decode(r).code();
  };
  CHECK(decode({"sa", "sb"}) == Status::Code::kOk);
  CHECK(decode({"sb", "sa"}) == Status::Code::kCorrupt);  // unsorted
  CHECK(decode({"sa", "sa"}) == Status::Code::kCorrupt);  // duplicate
  CHECK(decode({"xa"}) == Status::Code::kCorrupt);        // unknown tag
  CHECK(decode({""}) == Status::Code::kCorrupt);          // no tag
  CHECK(decode({std::string("b\2", 2)}) == Status::Code::kCorrupt);  // bool 2
  CHECK(decode({"sa", "sb"}, 1) == Status::Code::kCorrupt);          // past the limit
}

}  // namespace
}  // namespace fanfold
