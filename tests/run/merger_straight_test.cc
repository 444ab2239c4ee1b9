// Merger's last fold straight into the output (docs/streaming-merge.md):
// with SetDeferLastFold the last batch waits for the output stage, which
// folds it into rows over key ranges (VisitStraightPieces) instead of into
// a run; the rows, totals and skipped counts are those of the usual path,
// and a partial found bad mid-walk leaves the merger able to fold the
// usual way without it (FoldPending), to the bytes of a run without that
// shard.
#include "coordinator/run/merger.h"
#include "tests/run/merger_test_util.h"

#include <doctest/doctest.h>

#include <cstring>
#include <map>
#include <string>
#include <vector>

#include "common/job/job_spec.h"
#include "common/partial/group_key.h"

namespace fanfold {
namespace {

// Shard s: 300 groups over keys shared with nearby shards (key (7g + 131s)
// mod 3000), values whose sum's rounding depends on the merge order; every
// fifth value is text (skipped by the sum).
std::string OverlappingPartial(const Plan& plan, uint32_t shard) {
  return MadePartial(
      plan, shard, 300, [&](int g) { return static_cast<double>((7 * g + 131 * static_cast<int>(shard)) % 3000); },
      [&](int g) { return g % 5 == 4 ? Value::String("none") : Value::Number(shard % 2 == 0 ? 1e16 : 0.1 * g + shard); });
}

// `good` again with its body one byte short, stored raw, lengths and
// checksum made to match (partial_codec.h: flags at 20, lengths at 104 and
// 112): its header and checksum hold; only its last group is cut.
std::string CutLastByte(const std::string& good) {
  OpenedPartial p;
  REQUIRE(OpenPartial(good, &p).ok());
  p.body.pop_back();
  std::string out = good.substr(0, kPartialHeaderSize) + p.body;
  const uint32_t flags = kPartialRawBody;
  const uint64_t len = p.body.size();
  std::memcpy(out.data() + 20, &flags, 4);
  std::memcpy(out.data() + 104, &len, 8);
  std::memcpy(out.data() + 112, &len, 8);
  SetPartialEncodeTime(0, &out);
  return out;
}

// A merger whose results move to runs past 100 groups, folded over
// `threads` key ranges, deferring its last fold iff `defer`.
std::unique_ptr<Merger> RunsMerger(const Plan* plan, uint32_t n, size_t threads, bool defer) {
  auto m = std::make_unique<Merger>(plan, n);
  m->SetThreads(threads);
  m->SetRunThreshold(100, threads);
  m->SetDeferLastFold(defer);
  return m;
}

// The rows of a straight walk, sorted by key as Finish sorts them, as
// MergerText renders them.
std::string StraightText(Merger& m, const Plan& plan, bool* refold) {
  const size_t ranges = m.PrepareStraight(0);
  REQUIRE(ranges > 0);
  std::vector<std::vector<std::vector<Cell>>> by_range(ranges);
  std::vector<int> done(ranges, 0);
  Status s = m.VisitStraightPieces(
      0, ranges,
      [&](size_t p, std::vector<Cell>* row) {
        by_range[p].push_back(std::move(*row));
        return Status::Ok();
      },
      [&](size_t p, const Status&) { ++done[p]; }, refold);
  REQUIRE(s.ok());
  for (int d : done) CHECK(d == 1);
  OutputTable t;
  t.columns = plan.reductions[0].columns;
  t.key_columns = plan.reductions[0].group.size();
  for (auto& rows : by_range)
    for (auto& row : rows) t.rows.push_back(std::move(row));
  SortRows(&t, {});
  std::string text;
  for (const auto& row : t.rows)
    for (const Cell& c : row) text += std::to_string(c.number) + (c.kind == Cell::Kind::kFloat ? "f " : " ");
  return text;
}

// Intent: the straight walk's rows (sorted as Finish sorts), totals and
// skipped counts equal the usual path's
// at 1, 2, 3 and 7 key ranges; afterwards nothing may walk the result
// again; without the straight walk, VisitRows folds the waiting batch itself.
TEST_CASE("merger: the last fold straight into rows equals the usual path") {
  const auto plan = CountSumSketchPlan();
  const uint32_t n = 10;
  std::map<uint32_t, std::string> disk;
  for (uint32_t s = 0; s < n; ++s) disk[s] = OverlappingPartial(*plan, s);
  for (size_t threads : {1u, 2u, 3u, 7u}) {
    CAPTURE(threads);
    auto usual = RunsMerger(plan.get(), n, threads, false);
    for (uint32_t s = 0; s < n; ++s) REQUIRE(usual->Add(s, disk[s]).ok());
    REQUIRE(usual->in_runs());
    CHECK_FALSE(usual->last_fold_pending());
    const std::string expected = MergerText(*usual);

    auto straight = RunsMerger(plan.get(), n, threads, true);
    for (uint32_t s : {3u, 0u, 1u, 2u, 9u, 4u, 5u, 8u, 6u, 7u}) REQUIRE(straight->Add(s, disk[s]).ok());
    REQUIRE(straight->complete());
    REQUIRE(straight->last_fold_pending());
    // Counted before the fold, as if it folds (the run's end reads them first).
    CHECK(straight->totals().shards_merged == n);
    CHECK(straight->totals().records == usual->totals().records);
    CHECK(straight->totals().kept_by_reduction == usual->totals().kept_by_reduction);
    bool refold = true;
    CHECK(StraightText(*straight, *plan, &refold) == expected);
    CHECK_FALSE(refold);
    CHECK(straight->skipped(0) == usual->skipped(0));
    CHECK(straight->skipped(0)[1] > 0);  // the text values
    CHECK(straight->degraded(0) == usual->degraded(0));
    straight->ConsumeStraight();
    CHECK_FALSE(straight->last_fold_pending());
    CHECK(straight->VisitRows(0, [](std::vector<Cell>*) { return Status::Ok(); }).code() ==
          Status::Code::kInternal);

    auto lazy = RunsMerger(plan.get(), n, threads, true);
    for (uint32_t s = 0; s < n; ++s) REQUIRE(lazy->Add(s, disk[s]).ok());
    REQUIRE(lazy->last_fold_pending());
    CHECK(MergerText(*lazy) == expected);
    CHECK_FALSE(lazy->last_fold_pending());
    CHECK(lazy->totals().shards_merged == n);
  }
}

// Intent: a partial of the last batch whose checksum holds but whose last
// group is cut short is found by the straight walk (after rows of earlier
// groups were handed over); the walk says refold, and FoldPending then
// drops that partial as a late failure, restores the totals counted for
// it, and folds the rest to exactly the result without that shard —
// whichever partial of the batch it is and over 1, 2 and 3 key ranges.
TEST_CASE("merger: a partial found bad in the straight walk is folded away") {
  const auto plan = CountSumSketchPlan();
  const uint32_t n = 14;
  std::map<uint32_t, std::string> disk;
  for (uint32_t s = 0; s < n; ++s) disk[s] = OverlappingPartial(*plan, s);
  for (size_t threads : {1u, 2u, 3u}) {
    // The last batch's shards: the first and the last of them go bad.
    auto probe = RunsMerger(plan.get(), n, threads, true);
    for (uint32_t s = 0; s < n; ++s) REQUIRE(probe->Add(s, disk[s]).ok());
    REQUIRE(probe->last_fold_pending());
    const auto pending = probe->runs()->PendingPartials();
    REQUIRE(pending.size() >= 2);
    for (uint32_t bad : {pending.front().first, pending.back().first}) {
      CAPTURE(bad);
      CAPTURE(threads);
      auto without = RunsMerger(plan.get(), n, threads, false);
      for (uint32_t s = 0; s < n; ++s)
        if (s != bad) REQUIRE(without->Add(s, disk[s]).ok());
      without->MarkFailed(bad);
      const std::string expected = MergerText(*without);

      auto m = RunsMerger(plan.get(), n, threads, true);
      for (uint32_t s = 0; s < n; ++s) REQUIRE(m->Add(s, s == bad ? CutLastByte(disk[s]) : disk[s]).ok());
      REQUIRE(m->last_fold_pending());
      REQUIRE(m->late_failures().empty());
      CHECK(m->totals().shards_merged == n);  // counted as if it folds
      bool refold = false;
      (void)StraightText(*m, *plan, &refold);
      REQUIRE(refold);
      m->FoldPending();
      CHECK_FALSE(m->last_fold_pending());
      REQUIRE(m->late_failures().size() == 1);
      CHECK(m->late_failures()[0].first == bad);
      CHECK(m->late_failures()[0].second.find("truncated") != std::string::npos);
      CHECK(m->totals().shards_merged == n - 1);
      CHECK(m->totals().records == without->totals().records);
      CHECK(MergerText(*m) == expected);
    }
  }
}

}  // namespace
}  // namespace fanfold
