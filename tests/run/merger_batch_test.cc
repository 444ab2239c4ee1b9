// Merger's batched fold and overlapped walks (coordinator/run/merger.h):
// partials folded into the tables in batches, on a walk thread beside the
// next partials' decompression, give the bytes, totals and failures of the
// one-at-a-time merge (no reloader, one thread: the reference) in any
// arrival order and on any thread count; a batch with a forged partial, or
// one whose new groups pass the tables' limit, is folded again one at a
// time with the same result.
#include "coordinator/run/merger.h"
#include "tests/run/merger_test_util.h"

#include <doctest/doctest.h>

#include <map>
#include <string>
#include <vector>

namespace fanfold {
namespace {

std::string TablesBytes(const Merger& m) {
  std::string out;
  ByteWriter w(&out);
  m.tables(0).Encode(w);
  return out;
}

// Shard s: 3000 groups in a key window that moves with s (each shard brings
// new keys among old ones), sums whose rounding depends on the order.
std::string ShiftedPartial(const Plan& plan, uint32_t s) {
  return MadePartial(
      plan, s, 3000, [&](int g) { return static_cast<double>((g * 7 + static_cast<int>(s) * 131) % 9000); },
      [&](int g) { return Value::Number(s % 2 == 0 ? 1e16 : 1.0 + 0.1 * (g % 50)); });
}

// Shard s's partial with its last group's states altered (checksum resealed).
std::string Forged(const Plan& plan, const std::string& good) {
  std::vector<MeasureConfig> configs;
  for (const auto& m : plan.reductions[0].measures) configs.push_back(m.config);
  PartialState p(&configs);
  REQUIRE(DecodePartial(good, &p).ok());
  std::string body;
  EncodePartialBody(p, &body);
  body[body.size() - 3] = '\x7f';  // inside the last group's states
  return WrapBody(good, body);
}

// Intent: 1, 2 and 3 threads, walks overlapped or not, shards in order or
// shuffled, with and without a forged shard: the reference's table bytes,
// rows, totals and late failure, and batches really happen.
TEST_CASE("merger: batched and overlapped walks give the one-at-a-time bytes") {
  const auto plan = CountSumSketchPlan();
  const uint32_t n = 14, bad = 6;
  std::map<uint32_t, std::string> disk, forged_disk;
  for (uint32_t s = 0; s < n; ++s) disk[s] = ShiftedPartial(*plan, s);
  forged_disk = disk;
  forged_disk[bad] = Forged(*plan, disk[bad]);
  for (bool forge : {false, true}) {
    std::map<uint32_t, std::string>& from = forge ? forged_disk : disk;
    Merger ref(plan.get(), n);
    ref.SetThreads(1);
    for (uint32_t s = 0; s < n; ++s) REQUIRE(ref.Add(s, from[s]).ok());
    REQUIRE(ref.complete());
    REQUIRE(ref.late_failures().size() == (forge ? 1u : 0u));
    CHECK(ref.batched_partials() == 0);  // no reloader: one at a time
    const std::string expected_tables = TablesBytes(ref);
    const std::string expected_rows = MergerText(ref);
    for (size_t threads : {1, 2, 3})
      for (bool overlap : {false, true})
        for (bool shuffled : {false, true}) {
          CAPTURE(forge);
          CAPTURE(threads);
          CAPTURE(overlap);
          CAPTURE(shuffled);
          Merger m(plan.get(), n, /*waiting_budget=*/uint64_t{1} << 30);
          m.SetThreads(threads);
          m.SetOverlap(overlap, /*min_groups=*/0);  // every walk on a thread of its own
          m.SetReloader([&](uint32_t s, std::string* out) {
            *out = from[s];
            return Status::Ok();
          });
          const std::vector<uint32_t> order = shuffled
              ? std::vector<uint32_t>{2, 0, 1, 5, 3, 4, 9, 13, 6, 7, 8, 12, 10, 11}
              : std::vector<uint32_t>{0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13};
          for (uint32_t s : order) REQUIRE(m.Add(s, from[s]).ok());
          REQUIRE(m.complete());
          REQUIRE(m.late_failures().size() == (forge ? 1u : 0u));
          if (forge) {
            CHECK(m.late_failures()[0].first == bad);
            CHECK(m.late_failures()[0].second == ref.late_failures()[0].second);
          } else {
            CHECK(m.batched_partials() >= n / 2);
          }
          CHECK(m.totals().shards_merged == ref.totals().shards_merged);
          CHECK(m.totals().records == ref.totals().records);
          CHECK(TablesBytes(m) == expected_tables);
          CHECK(MergerText(m) == expected_rows);
        }
  }
}

// Intent: under a merge share whose limit holds about two and a half
// shards' groups (the estimate: Merger::kTableBytesPerGroup and
// kTableBytesPerState), batches decide as folding one at a time does:
// shards that all bring new keys move the results to sorted runs at the
// third shard, and shards that each bring a tenth new keys at the eighth
// (where the batch's new groups alone, 0.8 of a shard, would still fit), so
// their batch is folded again one at a time; shards over the same keys stay
// in the tables and are batched. Either way the rows of the one-at-a-time
// merger, and the same choice of tables or runs.
TEST_CASE("merger: batches keep the one-at-a-time choice of tables or runs") {
  const auto plan = CountSumSketchPlan();
  const uint32_t n = 12;
  const uint64_t per_shard = 2000 * (Merger::kTableBytesPerGroup + 3 * Merger::kTableBytesPerState);
  const MergeMemory memory{2 * (2 * per_shard + per_shard / 2), nullptr};
  enum class Keys { kDisjoint, kTenthNew, kShared };
  for (Keys keys : {Keys::kDisjoint, Keys::kTenthNew, Keys::kShared}) {
    const bool to_runs = keys != Keys::kShared;
    std::map<uint32_t, std::string> disk;
    for (uint32_t s = 0; s < n; ++s)
      disk[s] = keys == Keys::kDisjoint
                    ? DisjointPartial(*plan, s, 2000)
                    : MadePartial(
                          *plan, s, 2000,
                          [&](int g) { return static_cast<double>(g + (keys == Keys::kTenthNew ? 200 * s : 0)); },
                          [&](int g) { return Value::Number(0.25 * g + s); });
    Merger ref(plan.get(), n);  // no reloader: one at a time
    ref.SetThreads(2);
    ref.SetMemory(memory);
    for (uint32_t s = 0; s < n; ++s) REQUIRE(ref.Add(s, disk[s]).ok());
    CHECK(ref.in_runs() == to_runs);
    const std::string expected = MergerText(ref);
    for (bool overlap : {false, true}) {
      CAPTURE(static_cast<int>(keys));
      CAPTURE(overlap);
      Merger m(plan.get(), n, /*waiting_budget=*/uint64_t{1} << 30);
      m.SetThreads(2);
      m.SetOverlap(overlap, /*min_groups=*/0);
      m.SetMemory(memory);
      m.SetReloader([&](uint32_t s, std::string* out) {
        *out = disk[s];
        return Status::Ok();
      });
      for (uint32_t s = 0; s < n; ++s) REQUIRE(m.Add(s, disk[s]).ok());
      REQUIRE(m.complete());
      CHECK(m.in_runs() == to_runs);
      if (to_runs) {
        CHECK(m.refolded_batches() >= 1);
        if (keys == Keys::kDisjoint) CHECK(m.batched_partials() == 0);  // the first batch already leaves the tables
      } else {
        CHECK(m.refolded_batches() == 0);
        CHECK(m.batched_partials() >= n / 2);
      }
      CHECK(m.late_failures().empty());
      CHECK(m.totals().shards_merged == n);
      CHECK(MergerText(m) == expected);
    }
  }
}

// Intent: a merge that stops before its last shard (an interrupted run)
// counts, after WaitForMerges, every partial it took in turn — those
// waiting in a batch and the walk in flight too.
TEST_CASE("merger: WaitForMerges folds the waiting batch") {
  const auto plan = CountSumSketchPlan();
  const uint32_t n = 12;
  std::map<uint32_t, std::string> disk;
  for (uint32_t s = 0; s < n; ++s) disk[s] = ShiftedPartial(*plan, s);
  for (bool overlap : {false, true}) {
    CAPTURE(overlap);
    Merger m(plan.get(), n, /*waiting_budget=*/uint64_t{1} << 30);
    m.SetThreads(2);
    m.SetOverlap(overlap, /*min_groups=*/0);
    m.SetReloader([&](uint32_t s, std::string* out) {
      *out = disk[s];
      return Status::Ok();
    });
    for (uint32_t s = 0; s + 2 < n; ++s) REQUIRE(m.Add(s, disk[s]).ok());  // the last two never come
    REQUIRE(!m.complete());
    m.WaitForMerges();
    CHECK(m.totals().shards_merged == n - 2);
    CHECK(m.totals().records == 3000u * (n - 2));
    CHECK(m.batched_partials() >= 1);
  }
}

}  // namespace
}  // namespace fanfold
