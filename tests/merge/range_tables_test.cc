// RangeTables: a result split by key range over 1, 2, 3 or 7 tables merged
// on as many threads gives byte for byte the encoding one GroupTable gives
// (the reference: the plain table's own fold), and a malformed partial
// fails with the one table's message. The batched fold (PlanBatch /
// ApplyBatch, over GroupTable's) gives the bytes of folding the shards one
// at a time, for every measure kind, batch size and number of ranges, and a
// bad state fails the batch.
#include "coordinator/merge/range_tables.h"

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
  configs[1].kind = MeasureKind::kSum;  // rounding depends on the order of merging
  configs[2].kind = MeasureKind::kHyperLogLog;
  configs[2].precision = 8;
  configs[3].kind = MeasureKind::kDdSketch;
  configs[3].probabilities = {0.5};
  configs[3].alpha = 0.01;
  configs[4].kind = MeasureKind::kMean;
  return configs;
}

// Shard s: `groups` groups from a window that moves with s, values whose
// sums round differently in another order.
std::string ShardTable(const std::vector<MeasureConfig>* configs, int s, uint64_t groups) {
  GroupTable t(configs);
  testing::TestLcg rng(100 + static_cast<uint64_t>(s));
  for (uint64_t i = 0; i < groups * 2; ++i) {
    std::string key;
    AppendKeyValue(Value::String("k" + std::to_string(static_cast<uint64_t>(s) * 37 + rng.Next() % groups)), &key);
    MeasureState* const* st = t.FindOrAdd(key);
    const Value v = Value::Number(s % 2 == 0 ? 1e16 : 1.0 + 0.1 * static_cast<double>(rng.Next() % 50));
    for (size_t m = 0; m < configs->size(); ++m) st[m]->Add(&v);
  }
  std::string out;
  ByteWriter w(&out);
  t.Encode(w);
  return out;
}

std::string EncodeOf(const RangeTables& t) {
  std::string out;
  ByteWriter w(&out);
  t.Encode(w);
  return out;
}

// Intent: small shards first (every key in range 0 until the cuts are
// taken, then moved), then large ones; any thread count gives the one
// table's bytes, and more than one thread really splits the keys.
TEST_CASE("range_tables: 1, 2, 3 and 7 ranges encode as one table") {
  const std::vector<MeasureConfig> configs = Configs();
  std::vector<std::string> shards;
  for (int s = 0; s < 10; ++s) shards.push_back(ShardTable(&configs, s, s < 3 ? 40 : 3000));
  GroupTable reference(&configs);
  for (const std::string& b : shards) REQUIRE(reference.MergeEncoded(b).ok());
  std::string expected;
  ByteWriter w(&expected);
  reference.Encode(w);
  for (size_t threads : {1, 2, 3, 7}) {
    CAPTURE(threads);
    RangeTables t(&configs, threads, /*min_groups_for_threads=*/0);
    for (const std::string& b : shards) {
      REQUIRE(t.CheckEncoded(b).ok());
      REQUIRE(t.MergeEncoded(b).ok());
    }
    CHECK(t.range_count() == threads);
    CHECK(t.group_count() == reference.group_count());
    CHECK(EncodeOf(t) == expected);
    for (size_t i = 0; i < t.range_count(); ++i) CHECK(t.merged_groups(i) > 0);
    t.Clear();
    CHECK(t.group_count() == 0);
    for (size_t i = 0; i < t.range_count(); ++i) CHECK(t.merged_groups(i) == 0);
  }
}

// Intent: a partial cut short anywhere, or with a byte changed, fails with
// the message one GroupTable's check gives, at every thread count.
TEST_CASE("range_tables: a malformed partial fails as one table's check says") {
  const std::vector<MeasureConfig> configs = Configs();
  const std::string first = ShardTable(&configs, 1, 2000);
  const std::string good = ShardTable(&configs, 4, 1500);
  std::vector<std::string> bad;
  for (size_t cut = 0; cut < good.size(); cut += 1 + good.size() / 150) bad.push_back(good.substr(0, cut));
  for (size_t at = 1; at < good.size(); at += 1 + good.size() / 150) {
    bad.push_back(good);
    bad.back()[at] = static_cast<char>(bad.back()[at] ^ 0x5a);
  }
  bad.push_back(good + '\0');
  for (size_t threads : {1, 2, 3, 7}) {
    CAPTURE(threads);
    RangeTables t(&configs, threads, /*min_groups_for_threads=*/0);
    REQUIRE(t.MergeEncoded(first).ok());  // takes the cuts
    REQUIRE(t.range_count() == threads);
    for (const std::string& b : bad) {
      GroupTable one(&configs);
      const Status expected = one.CheckEncoded(b);
      CHECK(t.CheckEncoded(b).message() == expected.message());
      RangeTables scratch(&configs, threads, /*min_groups_for_threads=*/0);
      REQUIRE(scratch.MergeEncoded(first).ok());
      CHECK(scratch.MergeEncoded(b).message() == expected.message());
    }
  }
}

// Intent: shards of every measure kind (small ones first, folded one at a
// time until the key ranges are cut, then batches of 2, 3, 5 or all, and a
// group added between two batches) over 1, 2, 3 and 7 ranges: the one-at-
// a-time table's bytes, and PlanBatch counts exactly the groups each shard
// adds after the ones before it (a plain table folding them in turn).
TEST_CASE("range_tables: batches fold as the partials one at a time") {
  const std::vector<MeasureConfig> configs = testing::AllKindConfigs();
  std::vector<std::string> tables = ShardTables(&configs, 12, 3000, 2500);
  tables.push_back(tables[0]);  // last, a shard of low keys only: ranges it has no group in
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
      GroupTable in_turn(&configs);  // follows t one shard at a time
      size_t s = 0, batched = 0;
      for (; s < tables.size() && !t.can_batch(); ++s) {
        REQUIRE(t.MergeEncoded(tables[s]).ok());
        REQUIRE(in_turn.MergeEncoded(tables[s]).ok());
        if (s == extra_after) {
          (void)t.FindOrAdd(extra_key);
          (void)in_turn.FindOrAdd(extra_key);
        }
      }
      while (s < tables.size()) {
        std::vector<std::string_view> group;
        bool extra = false;  // the extra group comes after this batch
        while (s < tables.size() && group.size() < batch && !extra) {
          group.push_back(tables[s]);
          extra = s++ == extra_after;
        }
        const size_t before = t.group_count();
        std::vector<uint64_t> added;
        REQUIRE(t.PlanBatch(group, &added).ok());
        CHECK(t.group_count() == before);  // planning changes nothing
        REQUIRE(added.size() == group.size());
        uint64_t all = 0;
        for (size_t i = 0; i < group.size(); ++i) {
          const size_t had = in_turn.group_count();
          REQUIRE(in_turn.MergeEncoded(group[i]).ok());
          CHECK(added[i] == in_turn.group_count() - had);
          all += added[i];
        }
        REQUIRE(t.ApplyBatch().ok());
        CHECK(t.group_count() == before + all);
        batched += group.size();
        if (extra) {
          (void)t.FindOrAdd(extra_key);
          (void)in_turn.FindOrAdd(extra_key);
        }
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
    std::vector<uint64_t> added;
    const std::vector<std::string_view> batch = {tables[0], bad, tables[1]};
    Status s = t.PlanBatch(batch, &added);
    if (s.ok()) s = t.ApplyBatch();
    CHECK(!s.ok());
  }
  CHECK(tried > 20);
}

}  // namespace
}  // namespace fanfold
