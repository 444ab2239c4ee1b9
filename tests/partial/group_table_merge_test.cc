// GroupTable::MergeEncoded reads groups ahead of its merge and finds keys
// by walking them in key order: over many groups, new keys between old
// ones and groups added between merges, it must equal folding the decoded
// shard tables state by state (MeasureState::Merge, the reference), and a
// malformed table must fail with the message the plain check gives.
#include "common/partial/group_table.h"

#include <doctest/doctest.h>

#include <string>
#include <vector>

#include "common/partial/group_key.h"
#include "tests/measures/measure_test_util.h"
#include "tests/partial/group_table_test_util.h"

namespace fanfold {
namespace {

std::vector<MeasureConfig> Configs() {
  std::vector<MeasureConfig> configs(5);
  configs[0].kind = MeasureKind::kCount;
  configs[1].kind = MeasureKind::kSum;
  configs[2].kind = MeasureKind::kHyperLogLog;
  configs[2].precision = 8;
  configs[3].kind = MeasureKind::kDdSketch;
  configs[3].probabilities = {0.5, 0.95};
  configs[3].alpha = 0.01;
  configs[4].kind = MeasureKind::kMean;
  return configs;
}

// The reference fold: each shard table decoded, then merged state by state.
void MergeByDecoding(GroupTable* into, const std::string& bytes, const std::vector<MeasureConfig>* configs) {
  GroupTable part(configs);
  ByteReader r(bytes);
  REQUIRE(part.Decode(r).ok());
  for (size_t g = 0; g < part.group_count(); ++g) {
    MeasureState* const* mine = into->FindOrAdd(part.key(g));
    for (size_t m = 0; m < part.measure_count(); ++m) REQUIRE(mine[m]->Merge(*part.states(g)[m]).ok());
  }
}

// Intent: thousands of groups (far more than the read-ahead), each shard
// bringing new keys below, between and above the old ones, and a group
// added with FindOrAdd between two merges: the same bytes as the reference.
TEST_CASE("group_table_merge: the read-ahead merge equals merging decoded states") {
  const std::vector<MeasureConfig> configs = Configs();
  testing::TestLcg rng(5);
  GroupTable fast(&configs), reference(&configs);
  for (int shard = 0; shard < 9; ++shard) {
    GroupTable part(&configs);
    const uint64_t span = 1500 + 400 * static_cast<uint64_t>(shard);
    for (int i = 0; i < 3000; ++i) {
      const uint64_t group = (rng.Next() % span) * 3 + static_cast<uint64_t>(shard % 3);
      AddRecord(&part, group, static_cast<double>(rng.Next() % 100000) / 13.0);
    }
    const std::string bytes = EncodeOf(part);
    REQUIRE(fast.MergeEncoded(bytes).ok());
    MergeByDecoding(&reference, bytes, &configs);
    if (shard == 4) {  // a group outside any walk, then more walks
      AddRecord(&fast, 1000000 + 1, 2.0);
      AddRecord(&reference, 1000000 + 1, 2.0);
      AddRecord(&fast, 7, 3.0);
      AddRecord(&reference, 7, 3.0);
    }
    CHECK(fast.group_count() == reference.group_count());
  }
  CHECK(EncodeOf(fast) == EncodeOf(reference));
}

// Intent: many partials of 1-46 groups each (old keys, new keys between
// them, numbers below and above every old one, adjacent numbers) folded into a table of
// thousands, where the walk gallops over the table's order instead of
// stepping through it: the same groups and bytes as the reference fold.
TEST_CASE("group_table_merge: small partials into a big table equal merging decoded states") {
  const std::vector<MeasureConfig> configs = Configs();
  testing::TestLcg rng(17);
  GroupTable fast(&configs), reference(&configs);
  {
    GroupTable big(&configs);
    for (uint64_t g = 0; g < 4000; ++g) AddRecord(&big, g * 5 + 2, static_cast<double>(g % 97));
    const std::string bytes = EncodeOf(big);
    REQUIRE(fast.MergeEncoded(bytes).ok());
    MergeByDecoding(&reference, bytes, &configs);
  }
  for (int shard = 0; shard < 400; ++shard) {
    GroupTable part(&configs);
    const int groups = 1 + shard % 23;
    for (int i = 0; i < groups; ++i) {
      uint64_t group = rng.Next() % 20010;  // an old key (g * 5 + 2) one time in five
      if (i % 3 == 0) group = (rng.Next() % 4000) * 5 + 2;
      if (shard % 50 == 0 && i == 0) group = 0;  // below every old number
      if (shard % 50 == 1 && i == 0) group = 30000 + static_cast<uint64_t>(shard);  // above every old number
      AddRecord(&part, group, static_cast<double>(rng.Next() % 1000) / 7.0);
      if (shard % 7 == 0) AddRecord(&part, group + 1, 1.5);  // adjacent keys
    }
    const std::string bytes = EncodeOf(part);
    REQUIRE(fast.MergeEncoded(bytes).ok());
    MergeByDecoding(&reference, bytes, &configs);
    CHECK(fast.group_count() == reference.group_count());
  }
  CHECK(EncodeOf(fast) == EncodeOf(reference));
}

// Intent: a table cut short at any byte, or with one byte changed, fails
// in MergeEncoded with CheckEncoded's message (both name the same group
// and measure), read-ahead or not.
TEST_CASE("group_table_merge: a malformed table fails as the check says") {
  const std::vector<MeasureConfig> configs = Configs();
  testing::TestLcg rng(9);
  GroupTable part(&configs);
  for (int i = 0; i < 300; ++i) AddRecord(&part, rng.Next() % 60, static_cast<double>(rng.Next() % 1000));
  const std::string good = EncodeOf(part);
  size_t compared = 0;
  for (size_t cut = 0; cut < good.size(); cut += 1 + cut / 40) {
    const std::string bad = good.substr(0, cut);
    GroupTable checker(&configs), merger(&configs);
    const Status c = checker.CheckEncoded(bad);
    const Status m = merger.MergeEncoded(bad);
    REQUIRE(!c.ok());
    CHECK(m.message() == c.message());
    ++compared;
  }
  for (size_t at = 1; at < good.size(); at += 7) {
    std::string bad = good;
    bad[at] = static_cast<char>(bad[at] ^ 0x41);
    GroupTable checker(&configs), merger(&configs);
    const Status c = checker.CheckEncoded(bad);
    const Status m = merger.MergeEncoded(bad);
    CHECK(m.ok() == c.ok());
    CHECK(m.message() == c.message());
  }
  CHECK(compared > 100);
}

}  // namespace
}  // namespace fanfold
