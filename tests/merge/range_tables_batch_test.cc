// RangeTables' batched fold (PlanBatch / ApplyBatch, over GroupTable's):
// several shards folded at once, side by side in key order, give byte for
// byte the encoding of folding them one at a time (GroupTable::MergeEncoded
// in shard order, the reference), for every measure kind, batch size and
// number of key ranges; a partial whose state bytes are bad fails the batch.
#include "coordinator/merge/range_tables.h"

#include <doctest/doctest.h>

#include <string>
#include <vector>

#include "common/partial/group_table.h"
#include "tests/measures/measure_test_util.h"
#include "tests/partial/group_table_test_util.h"

namespace fanfold {
namespace {

std::string EncodeOf(const RangeTables& t) {
  std::string out;
  ByteWriter w(&out);
  t.Encode(w);
  return out;
}

// Intent: shards of every measure kind (small ones first, folded one at a
// time until the key ranges are cut, then batches of 2, 3, 5 or all, and a
// group added between two batches) over 1, 2, 3 and 7 ranges: the one-at-
// a-time table's bytes, and PlanBatch counts exactly the groups added.
TEST_CASE("range_tables: batches fold as the partials one at a time") {
  const std::vector<MeasureConfig> configs = testing::AllKindConfigs();
  const std::vector<std::string> tables = ShardTables(&configs, 12, 3000, 2500);
  const size_t extra_after = 6;  // a group added with FindOrAdd after this shard
  const std::string extra_key = KeyOf(1000000);
  GroupTable reference(&configs);
  for (size_t s = 0; s < tables.size(); ++s) {
    REQUIRE(reference.MergeEncoded(tables[s]).ok());
    if (s == extra_after) (void)reference.FindOrAdd(extra_key);
  }
  std::string expected;
  ByteWriter w(&expected);
  reference.Encode(w);
  for (size_t ranges : {1, 2, 3, 7})
    for (size_t batch : {2, 3, 5, 12}) {
      CAPTURE(ranges);
      CAPTURE(batch);
      RangeTables t(&configs, ranges, /*min_groups_for_threads=*/0);
      size_t s = 0, batched = 0;
      for (; s < tables.size() && !t.can_batch(); ++s) {
        REQUIRE(t.MergeEncoded(tables[s]).ok());
        if (s == extra_after) (void)t.FindOrAdd(extra_key);
      }
      while (s < tables.size()) {
        std::vector<std::string_view> group;
        bool extra = false;  // the extra group comes after this batch
        while (s < tables.size() && group.size() < batch && !extra) {
          group.push_back(tables[s]);
          extra = s++ == extra_after;
        }
        const size_t before = t.group_count();
        uint64_t added = 0;
        REQUIRE(t.PlanBatch(group, &added).ok());
        CHECK(t.group_count() == before);  // planning changes nothing
        REQUIRE(t.ApplyBatch().ok());
        CHECK(t.group_count() == before + added);
        batched += group.size();
        if (extra) (void)t.FindOrAdd(extra_key);
      }
      CHECK(batched >= 6);  // most shards went through batches
      CHECK(t.range_count() == ranges);
      CHECK(EncodeOf(t) == expected);
    }
}

// Intent: one shard of a batch with a state byte changed where its framing
// still holds (CutByKeys passes) but its state is rejected (the table's own
// check fails): the batch fails — in PlanBatch or in ApplyBatch — and no
// run of bytes crashes it.
TEST_CASE("range_tables: a bad state in a batch fails it") {
  const std::vector<MeasureConfig> configs = testing::AllKindConfigs();
  const std::vector<std::string> tables = ShardTables(&configs, 4, 2400, 2000);
  size_t tried = 0;
  for (size_t at = 3; at < tables[2].size(); at += 1 + tables[2].size() / 300) {
    std::string bad = tables[2];
    bad[at] = static_cast<char>(bad[at] ^ 0x5a);
    std::vector<RangeSlice> slices;
    size_t bad_range = 0;
    if (!CutByKeys(bad, configs.size(), {}, &slices, &bad_range).ok()) continue;  // framing: not this test's case
    GroupTable checker(&configs);
    if (checker.CheckEncoded(bad).ok()) continue;
    ++tried;
    RangeTables t(&configs, 2, /*min_groups_for_threads=*/0);
    REQUIRE(t.MergeEncoded(tables[3]).ok());  // enough groups to cut the key ranges
    REQUIRE(t.can_batch());
    uint64_t added = 0;
    const std::vector<std::string_view> batch = {tables[0], bad, tables[1]};
    Status s = t.PlanBatch(batch, &added);
    if (s.ok()) s = t.ApplyBatch();
    CHECK(!s.ok());
  }
  CHECK(tried > 20);
}

}  // namespace
}  // namespace fanfold
