// GroupFold: folding runs and key-sorted partials by a k-way merge gives
// byte for byte the encoding of coordinator/run/merger's in-memory fold
// (GroupTable::MergeEncoded in shard order) for every measure kind, whatever
// the batch sizes and the number of key ranges (threads); a bad partial is
// named and leaves the run alone.
#include "coordinator/merge/group_fold.h"

#include <doctest/doctest.h>

#include <cstring>
#include <string>
#include <vector>

#include "common/measures/measure_registry.h"
#include "common/partial/group_key.h"
#include "common/partial/group_table.h"
#include "coordinator/merge/encoded_group_cursor.h"
#include "tests/measures/measure_test_util.h"
#include "tests/partial/group_table_test_util.h"

namespace fanfold {
namespace {

using testing::TestLcg;

// The in-memory fold the coordinator does today.
std::string InMemory(const std::vector<MeasureConfig>* configs, const std::vector<std::string>& tables) {
  GroupTable merged(configs);
  for (const std::string& t : tables) REQUIRE(merged.MergeEncoded(t).ok());
  return EncodeOf(merged);
}

// The streaming fold: batches of `batch` partials, each folded with the
// run so far over `threads` key ranges.
std::string Streamed(const std::vector<MeasureConfig>* configs, const std::vector<std::string>& tables,
                     size_t batch, size_t threads) {
  std::string run;
  for (size_t first = 0; first < tables.size(); first += batch) {
    FoldInputs in;
    in.base = run;
    for (size_t i = first; i < std::min(tables.size(), first + batch); ++i) in.partials.push_back(tables[i]);
    std::string next;
    const FoldOutcome o = FoldEncoded(configs, in, threads, &next);
    REQUIRE(o.status.ok());
    run = std::move(next);
  }
  return run;
}

// Intent: the run after every batch equals the in-memory table's encoding
// byte for byte, for every measure kind, batch size and thread count: each
// key folds in shard order, and a run's states decode to what the table held.
TEST_CASE("group_fold: streamed runs equal the in-memory fold byte for byte") {
  const std::vector<MeasureConfig> configs = testing::AllKindConfigs();
  const std::vector<std::string> tables = ShardTables(&configs, 12, 300, 400);
  const std::string expected = InMemory(&configs, tables);
  for (size_t batch : {1, 2, 5, 12})
    for (size_t threads : {1, 2, 3, 7}) {
      CAPTURE(batch);
      CAPTURE(threads);
      CHECK(Streamed(&configs, tables, batch, threads) == expected);
    }
  // More threads than groups, and no input at all.
  CHECK(Streamed(&configs, std::vector<std::string>(tables.begin(), tables.begin() + 1), 1, 64) ==
        InMemory(&configs, std::vector<std::string>(tables.begin(), tables.begin() + 1)));
  std::string none;
  CHECK(FoldEncoded(&configs, FoldInputs{}, 4, &none).status.ok());
  CHECK(none == EncodeOf(GroupTable(&configs)));
}

// Intent: key ranges cut at SplitKeys' keys partition the groups: their
// outputs, concatenated in key order, are the whole fold's groups.
TEST_CASE("group_fold: key ranges partition the keys") {
  const std::vector<MeasureConfig> configs = testing::AllKindConfigs();
  const std::vector<std::string> tables = ShardTables(&configs, 4, 120, 200);
  FoldInputs in;
  for (const std::string& t : tables) in.partials.push_back(t);
  const std::vector<std::string> cut_keys = SplitKeys(in, configs.size(), 5);
  const std::vector<std::string>* cuts = &cut_keys;
  REQUIRE(cuts->size() == 4);
  std::string whole;
  const FoldOutcome all = GroupFold(&configs).FoldRange(in, KeyRange{}, &whole);
  REQUIRE(all.status.ok());
  std::string pieces;
  uint64_t groups = 0;
  KeyRange range;
  for (size_t i = 0; i <= cuts->size(); ++i) {
    range.bounded = i < cuts->size();
    if (range.bounded) range.hi = (*cuts)[i];
    const FoldOutcome o = GroupFold(&configs).FoldRange(in, range, &pieces);
    REQUIRE(o.status.ok());
    CHECK(o.groups > 0);
    groups += o.groups;
    range.lo = range.hi;
  }
  CHECK(groups == all.groups);
  CHECK(pieces == whole);
}

// The offset of the last state's one-byte length in a GroupTable encoding.
size_t FindLastStateLength(const std::string& encoded, size_t m) {
  EncodedGroupCursor c(encoded, m);
  std::string_view last;
  while (c.Next()) last = c.state(m - 1);
  REQUIRE(last.size() < 0x80);
  REQUIRE(last.data() + last.size() == encoded.data() + encoded.size());
  return static_cast<size_t>(last.data() - encoded.data()) - 1;
}

// Intent: a partial with bad bytes (framing or a state) fails the fold
// naming that partial, at every thread count, and folding again without
// it gives the in-memory fold of the others.
TEST_CASE("group_fold: a bad partial is named, and the others fold without it") {
  const std::vector<MeasureConfig> configs = testing::AllKindConfigs();
  std::vector<std::string> tables = ShardTables(&configs, 5, 80, 150);
  const std::string good2 = tables[2];
  std::string cut = good2;
  cut.pop_back();  // the last group's last state short: framing error at the end
  std::string trailing = good2 + '\0';
  // Framing intact, one state's bytes short: the last group's last state
  // loses its last byte and its length says so (the group count and the
  // key are unchanged).
  std::string short_state = good2;
  const size_t last_len_at = FindLastStateLength(good2, configs.size());
  short_state.erase(short_state.size() - 1);
  short_state[last_len_at] = static_cast<char>(short_state[last_len_at] - 1);
  for (const std::string& bad : {cut, trailing, short_state}) {
    tables[2] = bad;
    FoldInputs in;
    for (const std::string& t : tables) in.partials.push_back(t);
    for (size_t threads : {1, 3}) {
      std::string out = "untouched";
      const FoldOutcome o = FoldEncoded(&configs, in, threads, &out);
      CHECK(o.status.code() == Status::Code::kCorrupt);
      CHECK(o.bad_partial == 2);
      CHECK(out == "untouched");
    }
  }
  tables.erase(tables.begin() + 2);
  FoldInputs in;
  for (const std::string& t : tables) in.partials.push_back(t);
  std::string out;
  REQUIRE(FoldEncoded(&configs, in, 2, &out).status.ok());
  CHECK(out == InMemory(&configs, tables));
}

// Intent: differential check against the in-memory merger on mutated
// partials (thousands of single-byte changes, cuts and insertions): the
// fold accepts a partial iff GroupTable::CheckEncoded does, then gives the
// in-memory fold's bytes; when it refuses, it names that partial. Never a
// crash (this file also runs under the sanitizers in CI).
TEST_CASE("group_fold: mutated partials are refused exactly when the in-memory check refuses them") {
  const std::vector<MeasureConfig> configs = testing::AllKindConfigs();
  const std::vector<std::string> tables = ShardTables(&configs, 3, 40, 60);
  // The run of the first two shards, and the third shard mutated.
  const std::string run = Streamed(&configs, {tables[0], tables[1]}, 2, 1);
  TestLcg g(2026);
  int accepted = 0, refused = 0;
  for (int trial = 0; trial < 3000; ++trial) {
    std::string bad = tables[2];
    const size_t at = g.Next() % bad.size();
    switch (g.Next() % 4) {
      case 0: bad[at] = static_cast<char>(g.Next()); break;
      case 1: bad[at] = static_cast<char>(bad[at] ^ (1 << (g.Next() % 8))); break;
      case 2: bad.erase(at, 1 + g.Next() % 3); break;
      default: bad.insert(at, 1, static_cast<char>(g.Next())); break;
    }
    GroupTable reference(&configs);
    REQUIRE(reference.MergeEncoded(tables[0]).ok());
    REQUIRE(reference.MergeEncoded(tables[1]).ok());
    const Status checked = reference.CheckEncoded(bad);
    FoldInputs in;
    in.base = run;
    in.partials = {bad};
    std::string out;
    const FoldOutcome o = FoldEncoded(&configs, in, 1 + g.Next() % 3, &out);
    CAPTURE(trial);
    CAPTURE(checked.message());
    CAPTURE(o.status.message());
    if (checked.ok()) {
      const Status merged = reference.MergeEncoded(bad);
      if (merged.code() == Status::Code::kLimitExceeded) {
        CHECK(o.status.code() == Status::Code::kLimitExceeded);
        continue;
      }
      REQUIRE(merged.ok());
      REQUIRE(o.status.ok());
      CHECK(out == EncodeOf(reference));
      ++accepted;
    } else {
      CHECK_FALSE(o.status.ok());
      CHECK(o.bad_partial == 0);
      ++refused;
    }
  }
  CHECK(accepted > 100);  // both sides of the comparison are exercised
  CHECK(refused > 100);
}

}  // namespace
}  // namespace fanfold
