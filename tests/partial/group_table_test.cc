// GroupTable: folding shard tables straight from their encoding gives the
// table of the whole input; the check rejects what the format forbids and
// leaves the result alone.
#include "common/partial/group_table.h"

#include <doctest/doctest.h>

#include <string>
#include <vector>

#include "common/partial/group_key.h"
#include "tests/measures/measure_test_util.h"
#include "tests/partial/group_table_test_util.h"

namespace fanfold {
namespace {

using testing::TestLcg;

// Measures whose merge is exact, so the merged table must equal the whole
// one byte for byte.
std::vector<MeasureConfig> ExactConfigs() {
  std::vector<MeasureConfig> configs(4);
  configs[0].kind = MeasureKind::kCount;
  configs[1].kind = MeasureKind::kMax;
  configs[2].kind = MeasureKind::kHyperLogLog;
  configs[2].precision = 8;
  configs[3].kind = MeasureKind::kDdSketch;
  configs[3].probabilities = {0.5, 0.95};
  return configs;
}

// Intent: records split over shards, each shard's table encoded and folded
// in order with CheckEncoded + MergeEncoded, give the whole input's table.
TEST_CASE("group_table: merging encoded shard tables equals the whole") {
  const std::vector<MeasureConfig> configs = ExactConfigs();
  TestLcg g(31);
  GroupTable whole(&configs), merged(&configs);
  for (int shard = 0; shard < 12; ++shard) {
    GroupTable part(&configs);
    for (int i = 0; i < 400; ++i) {
      const uint64_t group = g.Next() % (shard < 6 ? 50 : 90);  // later shards bring new groups
      const double x = static_cast<double>(g.Next() % 100000) / 7.0;
      AddRecord(&whole, group, x);
      AddRecord(&part, group, x);
    }
    const std::string bytes = EncodeOf(part);
    REQUIRE(merged.CheckEncoded(bytes).ok());
    REQUIRE(merged.MergeEncoded(bytes).ok());
  }
  CHECK(merged.group_count() == whole.group_count());
  CHECK(EncodeOf(merged) == EncodeOf(whole));
}

// Intent: keys out of order or repeated, a truncated state and trailing
// bytes are each rejected by the check, and the table is left as it was.
TEST_CASE("group_table: the check rejects malformed tables") {
  const std::vector<MeasureConfig> configs = ExactConfigs();
  GroupTable result(&configs), part(&configs);
  AddRecord(&result, 1, 2.5);
  for (uint64_t group : {3, 5}) AddRecord(&part, group, 4.0);
  const std::string before = EncodeOf(result);
  const std::string good = EncodeOf(part);
  REQUIRE(result.CheckEncoded(good).ok());

  // Both groups' encodings, written in the wrong order or twice.
  auto two_groups = [&](uint64_t a, uint64_t b) {
    std::string out;
    ByteWriter w(&out);
    w.Varint(2);
    for (uint64_t group : {a, b}) {
      GroupTable one(&configs);
      AddRecord(&one, group, 4.0);
      const std::string e = EncodeOf(one);
      w.Bytes(std::string_view(e).substr(1));  // drop its group count of 1
    }
    return out;
  };
  CHECK(result.CheckEncoded(two_groups(3, 5)).ok());
  CHECK(result.CheckEncoded(two_groups(5, 3)).code() == Status::Code::kCorrupt);
  CHECK(result.CheckEncoded(two_groups(3, 3)).code() == Status::Code::kCorrupt);
  CHECK(result.CheckEncoded(good.substr(0, good.size() - 1)).code() == Status::Code::kCorrupt);
  CHECK(result.CheckEncoded(good + '\0').code() == Status::Code::kCorrupt);
  CHECK(EncodeOf(result) == before);

  // Decode holds the same order rule.
  GroupTable decoded(&configs);
  const std::string bad = two_groups(5, 3);
  ByteReader r(bad);
  CHECK(decoded.Decode(r).code() == Status::Code::kCorrupt);
}

}  // namespace
}  // namespace fanfold

namespace fanfold {

TEST_CASE("group_table: encoded keys come in ascending byte order, whatever they share") {
  // Intent: the 8-bytes-at-a-time sort agrees with std::string's byte order
  // (the reference) on keys that share long prefixes, are prefixes of each
  // other, hold zero bytes and differ only in their last byte.
  std::vector<MeasureConfig> configs(1);
  configs[0].kind = MeasureKind::kCount;
  GroupTable t(&configs);
  std::vector<std::string> keys;
  testing::TestLcg rng(7);
  const std::string stem = "2026-03-01T00:00:";
  for (int i = 0; i < 3000; ++i) {
    std::string k = stem.substr(0, rng.Next() % (stem.size() + 1));
    const int tail = static_cast<int>(rng.Next() % 12);
    for (int j = 0; j < tail; ++j) k.push_back(static_cast<char>(rng.Next() % 3 == 0 ? 0 : '0' + rng.Next() % 4));
    keys.push_back(k);
    t.FindOrAdd(k)[0]->Add(nullptr);
  }
  std::sort(keys.begin(), keys.end());
  keys.erase(std::unique(keys.begin(), keys.end()), keys.end());
  std::string bytes;
  ByteWriter w(&bytes);
  t.Encode(w);
  ByteReader r(bytes);
  REQUIRE(r.Varint() == keys.size());
  for (const std::string& want : keys) {
    CHECK(r.Str() == want);
    (void)r.Str();  // the count's state
  }
  CHECK(r.at_end());
}

}  // namespace fanfold
