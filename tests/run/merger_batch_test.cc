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
          m.SetOverlap(overlap);
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

// Intent: a batch whose new groups would take the tables past the merge
// share's limit (every shard's keys new) is folded again one at a time,
// which moves the results to sorted runs as that path decides: the same
// rows as the reference, and no batch counted.
TEST_CASE("merger: a batch past the tables' limit is folded one at a time") {
  const auto plan = CountSumSketchPlan();
  const uint32_t n = 12;
  std::map<uint32_t, std::string> disk;
  for (uint32_t s = 0; s < n; ++s) disk[s] = DisjointPartial(*plan, s, 2000);
  Merger ref(plan.get(), n);
  ref.SetThreads(1);
  ref.SetRunThreshold(0, 1);  // tables whatever their size
  for (uint32_t s = 0; s < n; ++s) REQUIRE(ref.Add(s, disk[s]).ok());
  const std::string expected = MergerText(ref);
  for (bool overlap : {false, true}) {
    CAPTURE(overlap);
    Merger m(plan.get(), n, /*waiting_budget=*/uint64_t{1} << 30);
    m.SetThreads(2);
    m.SetOverlap(overlap);
    // The limit (half the share) holds the estimate of about two shards'
    // groups (Merger::kTableBytesPerGroup and kTableBytesPerState).
    const uint64_t per_shard = 2000 * (Merger::kTableBytesPerGroup + 3 * Merger::kTableBytesPerState);
    m.SetMemory(MergeMemory{2 * (2 * per_shard + per_shard / 2), nullptr});
    m.SetReloader([&](uint32_t s, std::string* out) {
      *out = disk[s];
      return Status::Ok();
    });
    for (uint32_t s = 0; s < n; ++s) REQUIRE(m.Add(s, disk[s]).ok());
    REQUIRE(m.complete());
    CHECK(m.in_runs());
    CHECK(m.batched_partials() == 0);
    CHECK(m.late_failures().empty());
    CHECK(m.totals().shards_merged == n);
    CHECK(MergerText(m) == expected);
  }
}

}  // namespace
}  // namespace fanfold
