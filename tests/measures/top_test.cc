// TopState: exact top-k against Python's collections.Counter, and the
// Misra-Gries error bound past the distinct-value limit.
#include "common/measures/top.h"

#include <doctest/doctest.h>

#include <string>

#include "tests/measures/measure_test_util.h"

namespace fanfold {
namespace {

using testing::Rows;

MeasureConfig TopConfig(uint32_t k, uint64_t limit) {
  MeasureConfig c;
  c.kind = MeasureKind::kTop;
  c.k = k;
  c.limit = limit;
  return c;
}

struct Expected {
  Value value;
  int64_t count;
};

// Computed with Python 3.11: collections.Counter over (type, value) pairs of
// TopData, all 109 distinct values, sorted by count descending, then type
// (bool < number < string), then value (strings as UTF-8 bytes).
const Expected kCounter[] = {
    {Value::String("0"), 1264},
    {Value::Number(0.0), 1255},
    {Value::Bool(true), 1057},
    {Value::Number(1.0), 943},
    {Value::Bool(false), 928},
    {Value::Number(2.0), 838},
    {Value::Number(4.0), 769},
    {Value::Number(3.0), 757},
    {Value::Number(6.0), 741},
    {Value::Number(5.0), 726},
    {Value::String("1"), 525},
    {Value::String("2"), 395},
    {Value::String("3"), 317},
    {Value::String("4"), 287},
    {Value::String("6"), 245},
    {Value::String("5"), 224},
    {Value::String("8"), 212},
    {Value::String("7"), 210},
    {Value::String("11"), 190},
    {Value::String("10"), 178},
    {Value::String("9"), 168},
    {Value::String("16"), 163},
    {Value::String("13"), 160},
    {Value::String("12"), 159},
    {Value::String("14"), 153},
    {Value::String("27"), 146},
    {Value::String("36"), 146},
    {Value::String("18"), 144},
    {Value::String("15"), 142},
    {Value::String("21"), 135},
    {Value::String("25"), 135},
    {Value::String("17"), 131},
    {Value::String("19"), 131},
    {Value::String("22"), 128},
    {Value::String("26"), 126},
    {Value::String("20"), 123},
    {Value::String("23"), 120},
    {Value::String("29"), 118},
    {Value::String("28"), 115},
    {Value::String("31"), 113},
    {Value::String("30"), 112},
    {Value::String("33"), 112},
    {Value::String("34"), 109},
    {Value::String("32"), 106},
    {Value::String("35"), 106},
    {Value::String("45"), 105},
    {Value::String("39"), 103},
    {Value::String("24"), 102},
    {Value::String("43"), 101},
    {Value::String("40"), 91},
    {Value::String("42"), 90},
    {Value::String("50"), 90},
    {Value::String("37"), 89},
    {Value::String("41"), 89},
    {Value::String("44"), 89},
    {Value::String("60"), 88},
    {Value::String("48"), 87},
    {Value::String("82"), 85},
    {Value::String("67"), 84},
    {Value::String("49"), 83},
    {Value::String("57"), 83},
    {Value::String("64"), 82},
    {Value::String("52"), 80},
    {Value::String("74"), 80},
    {Value::String("81"), 80},
    {Value::String("58"), 79},
    {Value::String("38"), 78},
    {Value::String("47"), 78},
    {Value::String("51"), 77},
    {Value::String("55"), 77},
    {Value::String("76"), 75},
    {Value::String("46"), 73},
    {Value::String("54"), 73},
    {Value::String("66"), 73},
    {Value::String("72"), 73},
    {Value::String("73"), 73},
    {Value::String("56"), 72},
    {Value::String("63"), 71},
    {Value::String("65"), 71},
    {Value::String("53"), 70},
    {Value::String("62"), 69},
    {Value::String("77"), 69},
    {Value::String("79"), 69},
    {Value::String("68"), 68},
    {Value::String("84"), 67},
    {Value::String("69"), 66},
    {Value::String("80"), 66},
    {Value::String("87"), 66},
    {Value::String("93"), 65},
    {Value::String("95"), 65},
    {Value::String("75"), 63},
    {Value::String("83"), 63},
    {Value::String("61"), 62},
    {Value::String("97"), 62},
    {Value::String("86"), 61},
    {Value::String("92"), 61},
    {Value::String("94"), 61},
    {Value::String("59"), 60},
    {Value::String("70"), 58},
    {Value::String("71"), 58},
    {Value::String("90"), 58},
    {Value::String("85"), 55},
    {Value::String("89"), 54},
    {Value::String("78"), 52},
    {Value::String("91"), 52},
    {Value::String("88"), 51},
    {Value::String("98"), 51},
    {Value::String("96"), 46},
    {Value::String("99"), 46}
};

bool SameValue(const Cell& c, const Value& v) {
  switch (v.kind) {
    case ValueKind::kBool: return c.kind == Cell::Kind::kBool && c.boolean == v.boolean;
    case ValueKind::kNumber:  // integral numbers come back as exact Int cells (value_key.h)
      return (c.kind == Cell::Kind::kFloat && c.number == v.number) ||
             (c.kind == Cell::Kind::kInt && static_cast<double>(c.integer) == v.number);
    default: return c.kind == Cell::Kind::kString && c.str == v.str;
  }
}

void CheckTop(const MeasureState& s, size_t k) {
  auto cells = testing::FinalOf(s);
  REQUIRE(cells.size() == 1);
  REQUIRE(cells[0].kind == Cell::Kind::kList);
  const auto& list = cells[0].items;
  REQUIRE(list.size() == k);
  for (size_t i = 0; i < k; ++i) {
    INFO("rank " << i);
    REQUIRE(list[i].kind == Cell::Kind::kRecord);
    CHECK(list[i].names == std::vector<std::string>{"value", "count"});
    CHECK(SameValue(list[i].items[0], kCounter[i].value));
    CHECK(list[i].items[1].integer == kCounter[i].count);
  }
}

// Intent: with the distinct values under the limit the top k equal Python's
// Counter ranking, including count ties broken by value, whole and split.
TEST_CASE("top: exact counts match collections.Counter") {
  Rows rows = testing::TypedValueData();
  for (size_t k : {1u, 10u, 25u, 109u}) CheckTop(*testing::Whole(TopConfig(k, 1000), rows), k);
  // k beyond the number of distinct values lists them all.
  CheckTop(*testing::Whole(TopConfig(500, 1000), rows), 109);
  const std::string whole = testing::EncodeOf(*testing::Whole(TopConfig(25, 1000), rows));
  testing::TestLcg rng(4);
  for (int shards : {2, 5, 33}) {
    auto merged = testing::SplitMerged(TopConfig(25, 1000), rows, shards, rng);
    CHECK(testing::EncodeOf(*merged) == whole);
    CheckTop(*merged, 25);
    CHECK(dynamic_cast<const TopState&>(*merged).exact());
  }
}

// Misra & Gries (1982), merged per Agarwal et al. (2012): for every value,
// true - (n - S)/(limit + 1) <= reported <= true.
void CheckBound(const TopState& s) {
  const uint64_t bound = s.ErrorBound();
  for (const Expected& e : kCounter) {
    const uint64_t got = s.CountOf(e.value);
    CHECK(got <= static_cast<uint64_t>(e.count));
    CHECK(got + bound >= static_cast<uint64_t>(e.count));
  }
}

// Intent: past the limit (20 counters for 109 values) every count is within
// the Misra-Gries bound of Counter's, whole and for any split; the heavy
// hitters (count > n/(limit+1)) are still all present.
TEST_CASE("top: bounded summary keeps the Misra-Gries bound") {
  Rows rows = testing::TypedValueData();
  const uint64_t limit = 20;
  auto whole = testing::Whole(TopConfig(10, limit), rows);
  const auto& w = dynamic_cast<const TopState&>(*whole);
  CHECK_FALSE(w.exact());
  CHECK(w.ErrorBound() > 0);
  CHECK(w.ErrorBound() <= 20000 / (limit + 1));
  CheckBound(w);
  for (const Expected& e : kCounter)
    if (e.count > 20000 / static_cast<int64_t>(limit + 1)) CHECK(w.CountOf(e.value) > 0);
  testing::TestLcg rng(6);
  for (int shards : {2, 4, 9, 50}) {
    auto merged = testing::SplitMerged(TopConfig(10, limit), rows, shards, rng);
    CheckBound(dynamic_cast<const TopState&>(*merged));
  }
}

// Intent: 64-bit ids are counted apart and come back as exact Int cells
// with every digit, ranked as Python's collections.Counter(...).most_common
// ranks them (ties by value ascending); 5 and 5.0 are one value.
TEST_CASE("top: 64-bit integers exactly") {
  Rows rows;
  for (int i = 0; i < 3; ++i) rows.Add(Value::Uint(UINT64_MAX));
  for (int i = 0; i < 2; ++i) rows.Add(Value::Int(9007199254740993));
  rows.Add(Value::Int(9007199254740992));
  rows.AddNumber(9007199254740992.0);
  rows.Add(Value::Int(INT64_MIN));
  // Python: Counter([2**64-1]*3 + [2**53+1]*2 + [2**53, 2.0**53, -2**63]).most_common()
  //   == [(18446744073709551615, 3), (9007199254740993, 2), (9007199254740992, 2), (-9223372036854775808, 1)]
  // (the tie of count 2 shown by value ascending: 2^53 before 2^53+1).
  auto cells = testing::FinalOf(*testing::Whole(TopConfig(10, 100), rows));
  const auto& list = cells[0].items;
  REQUIRE(list.size() == 4);
  const WideInt want_value[] = {static_cast<WideInt>(UINT64_MAX), 9007199254740992, 9007199254740993, INT64_MIN};
  const int64_t want_count[] = {3, 2, 2, 1};
  for (size_t i = 0; i < 4; ++i) {
    REQUIRE(list[i].items[0].kind == Cell::Kind::kInt);
    CHECK(list[i].items[0].integer == want_value[i]);
    CHECK(list[i].items[1].integer == want_count[i]);
  }
}

// Intent: missing, null and objects are skipped and counted; bools, numbers
// and strings are separate values ("1" is not 1); -0.0 is 0.0.
TEST_CASE("top: typed values and skipped") {
  Rows rows;
  rows.Add(Value::Missing());
  rows.Add(Value::Null());
  rows.Add(Value::Other());
  rows.AddString("1");
  rows.AddNumber(1);
  rows.AddNumber(-0.0);
  rows.AddNumber(0.0);
  auto s = testing::Whole(TopConfig(10, 100), rows);
  CHECK(s->skipped() == 3);
  auto cells = testing::FinalOf(*s);
  REQUIRE(cells[0].items.size() == 3);
  // 0 twice first; then the count-1 ties by value: number 1 before string "1".
  CHECK(cells[0].items[0].items[0].kind == Cell::Kind::kInt);  // 0: integral, an exact Int cell
  CHECK(cells[0].items[0].items[0].integer == 0);
  CHECK(cells[0].items[0].items[1].integer == 2);
  CHECK(cells[0].items[1].items[0].kind == Cell::Kind::kInt);
  CHECK(cells[0].items[2].items[0].kind == Cell::Kind::kString);
  auto empty = testing::FinalOf(*NewMeasureState(TopConfig(3, 10)));
  CHECK(empty[0].kind == Cell::Kind::kList);
  CHECK(empty[0].items.empty());
}

}  // namespace
}  // namespace fanfold
