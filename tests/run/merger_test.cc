// Merger: partials fold in shard order whatever order they arrive in; a
// partial that is bad past its checksum costs only its shard; early
// partials wait on disk, not in memory, when a reloader is set.
#include "coordinator/run/merger.h"
#include "tests/run/merger_test_util.h"

#include <doctest/doctest.h>
#include <malloc.h>
#include <zstd.h>

#include <cstring>

#include <map>
#include <string>
#include <vector>

#include "common/partial/group_key.h"
#include "common/job/job_spec.h"

namespace fanfold {
namespace {

// The measure configs of the plan's one reduction.
std::vector<MeasureConfig> ConfigsOf(const Plan& plan) {
  std::vector<MeasureConfig> configs;
  for (const auto& m : plan.reductions[0].measures) configs.push_back(m.config);
  return configs;
}

// Shard s's partial: groups s % 5 .. s % 5 + 3, values that make the sum's
// rounding depend on the order of merging. `pad` groups add bulk.
std::string PartialFor(const Plan& plan, uint32_t shard, int pad = 0) {
  const std::vector<MeasureConfig> configs = ConfigsOf(plan);
  PartialState p(&configs);
  p.header.fingerprint = plan.fingerprint;
  p.header.shard_index = shard;
  p.header.records = 4 + static_cast<uint64_t>(pad);
  for (int g = 0; g < 4 + pad; ++g) {
    std::string key;
    AppendKeyValue(Value::Number(static_cast<double>(g < 4 ? shard % 5 + g : 1000 + g)), &key);
    MeasureState* const* states = p.reductions[0].groups.FindOrAdd(key);
    const Value v = Value::Number(shard % 2 == 0 ? 1e16 : 1.0 + shard * 0.1);
    for (size_t m = 0; m < configs.size(); ++m) states[m]->Add(&v);
  }
  std::string out;
  EncodePartial(p, &out);
  return out;
}

// Intent: any arrival order gives the same bytes as shard order, with and
// without a reloader (early partials then come back from the "disk").
TEST_CASE("merger: arrival order does not change the result") {
  const auto plan = CountSumSketchPlan();
  const uint32_t n = 12;
  std::map<uint32_t, std::string> disk;
  for (uint32_t s = 0; s < n; ++s) disk[s] = PartialFor(*plan, s);
  Merger in_order(plan.get(), n);
  for (uint32_t s = 0; s < n; ++s) REQUIRE(in_order.Add(s, disk[s]).ok());
  const std::string expected = MergerText(in_order);
  for (bool reload : {false, true}) {
    Merger m(plan.get(), n, /*waiting_budget=*/0);  // with a reloader, every early partial goes back to "disk"
    int reloads = 0;
    if (reload) m.SetReloader([&](uint32_t s, std::string* out) { ++reloads; *out = disk[s]; return Status::Ok(); });
    for (uint32_t s : {11u, 3u, 7u, 0u, 1u, 2u, 10u, 9u, 4u, 5u, 6u, 8u}) REQUIRE(m.Add(s, disk[s]).ok());
    REQUIRE(m.complete());
    CHECK(MergerText(m) == expected);
    CHECK(m.totals().shards_merged == n);
    if (reload) CHECK(reloads > 0);
  }
}

// Intent: a partial whose checksum holds but whose body is malformed (its
// last group cut short) is reported as a late failure and leaves the result
// exactly as if that shard had failed: none of its good groups are merged.
TEST_CASE("merger: a malformed body costs only its shard") {
  const auto plan = CountSumSketchPlan();
  std::vector<std::string> parts;
  for (uint32_t s = 0; s < 4; ++s) parts.push_back(PartialFor(*plan, s));
  Merger without(plan.get(), 4);
  for (uint32_t s : {0u, 1u, 3u}) REQUIRE(without.Add(s, parts[s]).ok());
  without.MarkFailed(2);
  const std::string expected = MergerText(without);

  const std::vector<MeasureConfig> configs = ConfigsOf(*plan);
  PartialState p(&configs);
  REQUIRE(DecodePartial(parts[2], &p).ok());
  std::string body;
  EncodePartialBody(p, &body);
  PartialState check(&configs);
  REQUIRE(DecodePartial(WrapBody(parts[2], body), &check).ok());  // the forging itself is faithful
  body.pop_back();
  const std::string forged = WrapBody(parts[2], body);

  Merger with(plan.get(), 4);
  REQUIRE(with.Add(2, forged).ok());  // header and checksum hold
  for (uint32_t s : {3u, 0u, 1u}) REQUIRE(with.Add(s, parts[s]).ok());
  REQUIRE(with.late_failures().size() == 1);
  CHECK(with.late_failures()[0].first == 2);
  CHECK(with.totals().shards_merged == 3);
  CHECK(MergerText(with) == expected);
}

// Intent: with a reloader the merge checks while it folds (no separate
// check pass), so a forged partial is found after some of its groups were
// merged; the result is then refolded from the "disk" without it and comes
// out exactly as if that shard had failed, whether it was found first, in
// the middle or last, and in any arrival order.
TEST_CASE("merger: a malformed body found midway is rebuilt away with a reloader") {
  const auto plan = CountSumSketchPlan();
  const uint32_t n = 6;
  std::map<uint32_t, std::string> disk;
  for (uint32_t s = 0; s < n; ++s) disk[s] = PartialFor(*plan, s, /*pad=*/3);
  const std::vector<MeasureConfig> configs = ConfigsOf(*plan);
  for (uint32_t bad : {0u, 3u, 5u}) {
    Merger without(plan.get(), n);
    for (uint32_t s = 0; s < n; ++s)
      if (s != bad) REQUIRE(without.Add(s, disk[s]).ok());
    without.MarkFailed(bad);
    const std::string expected = MergerText(without);

    PartialState p(&configs);
    REQUIRE(DecodePartial(disk[bad], &p).ok());
    std::string body, table;
    EncodePartialBody(p, &body);
    ByteWriter tw(&table);
    p.reductions[0].groups.Encode(tw);
    // The body ends with the one reduction's u64 table length and table
    // (partial_codec.h): cut the table's last byte and say so in its
    // length, so the framing holds and only the last group's last state is
    // short: every earlier group merges before the merge finds it.
    REQUIRE(body.size() > table.size() + 8);
    REQUIRE(body.compare(body.size() - table.size(), table.size(), table) == 0);
    const uint64_t cut = table.size() - 1;
    std::memcpy(body.data() + body.size() - table.size() - 8, &cut, 8);
    body.pop_back();
    std::map<uint32_t, std::string> forged_disk = disk;
    forged_disk[bad] = WrapBody(disk[bad], body);
    for (bool reversed : {false, true}) {
      Merger m(plan.get(), n, /*waiting_budget=*/0);
      int reloads = 0;
      m.SetReloader([&](uint32_t s, std::string* out) {
        ++reloads;
        *out = forged_disk[s];
        return Status::Ok();
      });
      for (uint32_t i = 0; i < n; ++i) {
        const uint32_t s = reversed ? n - 1 - i : i;
        REQUIRE(m.Add(s, forged_disk[s]).ok());  // header and checksum hold
      }
      REQUIRE(m.complete());
      REQUIRE(m.late_failures().size() == 1);
      CHECK(m.late_failures()[0].first == bad);
      CHECK(m.totals().shards_merged == n - 1);
      CHECK(m.totals().records == 7 * (n - 1));
      CHECK(MergerText(m) == expected);
      if (bad > 0 && !reversed) CHECK(reloads == static_cast<int>(bad));  // the rebuild read every shard before it
    }
  }
  // Two forged partials: one rebuild (for the first); the second is then
  // caught by the check before it is merged.
  {
    std::map<uint32_t, std::string> forged_disk = disk;
    for (uint32_t bad : {1u, 4u}) {
      PartialState p(&configs);
      REQUIRE(DecodePartial(disk[bad], &p).ok());
      std::string body, table;
      EncodePartialBody(p, &body);
      ByteWriter tw(&table);
      p.reductions[0].groups.Encode(tw);
      const uint64_t cut = table.size() - 1;
      std::memcpy(body.data() + body.size() - table.size() - 8, &cut, 8);
      body.pop_back();
      forged_disk[bad] = WrapBody(disk[bad], body);
    }
    Merger without(plan.get(), n);
    for (uint32_t s = 0; s < n; ++s)
      if (s != 1 && s != 4) REQUIRE(without.Add(s, disk[s]).ok());
    without.MarkFailed(1);
    without.MarkFailed(4);
    Merger m(plan.get(), n, /*waiting_budget=*/uint64_t{1} << 30);
    int reloads = 0;
    m.SetReloader([&](uint32_t s, std::string* out) {
      ++reloads;
      *out = forged_disk[s];
      return Status::Ok();
    });
    for (uint32_t s = 0; s < n; ++s) REQUIRE(m.Add(s, forged_disk[s]).ok());
    CHECK(m.late_failures().size() == 2);
    CHECK(reloads == 1);  // the rebuild for shard 1 read shard 0; none for shard 4
    CHECK(MergerText(m) == MergerText(without));
  }
}

// Intent: results moved to sorted runs (from the first shard on, or after
// a few groups; one or two key ranges) give the in-memory tables' bytes in
// any arrival order, and a forged partial in a batch is dropped there
// alone: the result is exactly that of the other shards.
TEST_CASE("merger: results folded as sorted runs equal the in-memory tables") {
  const auto plan = CountSumSketchPlan();
  const uint32_t n = 9;
  std::map<uint32_t, std::string> disk;
  for (uint32_t s = 0; s < n; ++s) disk[s] = PartialFor(*plan, s, /*pad=*/static_cast<int>(s % 3));
  Merger in_memory(plan.get(), n);
  for (uint32_t s = 0; s < n; ++s) REQUIRE(in_memory.Add(s, disk[s]).ok());
  CHECK_FALSE(in_memory.in_runs());
  const std::string expected = MergerText(in_memory);

  const std::vector<MeasureConfig> configs = ConfigsOf(*plan);
  PartialState p(&configs);
  REQUIRE(DecodePartial(disk[4], &p).ok());
  std::string body;
  EncodePartialBody(p, &body);
  body[body.size() - 3] = '\x7f';  // inside the last group's states: framing or a state breaks
  const std::string forged = WrapBody(disk[4], body);
  Merger without4(plan.get(), n);
  for (uint32_t s = 0; s < n; ++s)
    if (s != 4) REQUIRE(without4.Add(s, disk[s]).ok());
  without4.MarkFailed(4);
  const std::string expected_without4 = MergerText(without4);

  for (uint64_t threshold : {1, 6})
    for (size_t threads : {1, 2})
      for (bool forge : {false, true}) {
        CAPTURE(threshold);
        CAPTURE(threads);
        CAPTURE(forge);
        Merger m(plan.get(), n, /*waiting_budget=*/0);
        m.SetRunThreshold(threshold, threads);
        m.SetReloader([&](uint32_t s, std::string* out) {
          *out = forge && s == 4 ? forged : disk[s];
          return Status::Ok();
        });
        for (uint32_t s : {2u, 0u, 1u, 8u, 3u, 4u, 7u, 6u, 5u}) REQUIRE(m.Add(s, forge && s == 4 ? forged : disk[s]).ok());
        REQUIRE(m.complete());
        CHECK(m.in_runs());
        CHECK(m.late_failures().size() == (forge ? 1u : 0u));
        CHECK(m.totals().shards_merged == (forge ? n - 1 : n));
        CHECK(MergerText(m) == (forge ? expected_without4 : expected));
      }
}

// Intent: with a reloader, early partials are held in memory only up to
// the waiting budget; past it they wait on disk, and their buffers are
// released, not just emptied (clear() keeps the capacity).
TEST_CASE("merger: early partials past the budget wait on disk, not in memory") {
  const auto plan = CountSumSketchPlan();
  const uint32_t n = 401;
  const std::string one = PartialFor(*plan, 1, 3000);  // ~3.5 KB encoded (integer group keys compress well)
  REQUIRE(one.size() > 3000);
  const uint64_t budget = 100 * one.size();
  Merger m(plan.get(), n, budget);
  int reloads = 0;
  m.SetReloader([&](uint32_t s, std::string* out) {
    ++reloads;
    *out = PartialFor(*plan, s, 3000);
    return Status::Ok();
  });
  // The encoder's buffers, kept between partials, at their size first: if
  // malloc hands them out from its heap they would be counted below, and
  // the count is of the waiting partials.
  (void)PartialFor(*plan, n - 1, 3000);
  const size_t before = mallinfo2().uordblks;
  for (uint32_t s = 1; s < n; ++s) REQUIRE(m.Add(s, PartialFor(*plan, s, 3000)).ok());
  const size_t held = mallinfo2().uordblks - before;
  CHECK(held < budget + 40 * one.size());  // 400 waiting partials would hold 400 x
  REQUIRE(m.Add(0, PartialFor(*plan, 0)).ok());
  CHECK(m.complete());
  CHECK(reloads > 250);  // the ones past the budget came back from "disk"
  CHECK(reloads < 320);
}

}  // namespace

// Intent: the merged totals add up each raw field's present count over the
// shards (reused ones come through Add as well), and a partial without the
// counts makes them unknown rather than wrong.
TEST_CASE("merger: per-field present counts add up over shards") {
  const auto plan = CountSumSketchPlan();  // raw fields {/k}, {/v}
  const std::vector<MeasureConfig> configs = ConfigsOf(*plan);
  const auto partial = [&](uint32_t shard, std::vector<uint64_t> present) {
    PartialState p(&configs);
    p.header.fingerprint = plan->fingerprint;
    p.header.shard_index = shard;
    p.field_present = std::move(present);
    std::string out;
    EncodePartial(p, &out);
    return out;
  };
  Merger m(plan.get(), 3);
  REQUIRE(m.Add(2, partial(2, {5, 0})).ok());
  REQUIRE(m.Add(0, partial(0, {7, 0})).ok());
  m.MarkFailed(1);
  REQUIRE(m.complete());
  CHECK(m.totals().field_counts_known);
  CHECK(m.totals().field_present == std::vector<uint64_t>{12, 0});

  Merger lacking(plan.get(), 2);
  REQUIRE(lacking.Add(0, partial(0, {7, 1})).ok());
  REQUIRE(lacking.Add(1, partial(1, {})).ok());
  CHECK_FALSE(lacking.totals().field_counts_known);
}

}  // namespace fanfold

namespace fanfold {

// Intent: the tables path merged on 1, 2, 3 and 7 threads (one key range
// each, partials large enough to use them) gives the same result; a forged
// partial whose bad bytes lie in the last range (the other ranges merged
// first) is dropped alone, with one thread's message, both when the merge
// finds it (with a reloader: the result is rebuilt without it) and when
// every partial is checked first (without one).
TEST_CASE("merger: the tables merged on several threads give one thread's result") {
  const auto plan = CountSumSketchPlan();
  const uint32_t n = 6;
  std::map<uint32_t, std::string> disk;
  for (uint32_t s = 0; s < n; ++s) disk[s] = PartialFor(*plan, s, /*pad=*/9000 + static_cast<int>(s));
  const std::vector<MeasureConfig> configs = ConfigsOf(*plan);
  PartialState p(&configs);
  REQUIRE(DecodePartial(disk[3], &p).ok());
  std::string body;
  EncodePartialBody(p, &body);
  body[body.size() - 3] = '\x7f';  // inside the last group's states
  const std::string forged = WrapBody(disk[3], body);

  std::string expected[2], encoded[2], message;
  const auto encode = [](const RangeTables& t) {
    std::string out;
    ByteWriter w(&out);
    t.Encode(w);
    return out;
  };
  for (bool forge : {false, true}) {
    Merger one(plan.get(), n);
    one.SetThreads(1);
    for (uint32_t s = 0; s < n; ++s) REQUIRE(one.Add(s, forge && s == 3 ? forged : disk[s]).ok());
    REQUIRE(one.late_failures().size() == (forge ? 1u : 0u));
    if (forge) message = one.late_failures()[0].second;
    encoded[forge] = encode(one.tables(0));
    expected[forge] = MergerText(one);
  }
  CHECK(expected[0] != expected[1]);
  for (size_t threads : {1, 2, 3, 7})
    for (bool reload : {false, true})
      for (bool forge : {false, true}) {
        CAPTURE(threads);
        CAPTURE(reload);
        CAPTURE(forge);
        Merger m(plan.get(), n, /*waiting_budget=*/0);
        m.SetThreads(threads);
        if (reload)
          m.SetReloader([&](uint32_t s, std::string* out) {
            *out = forge && s == 3 ? forged : disk[s];
            return Status::Ok();
          });
        for (uint32_t s : {1u, 0u, 2u, 5u, 3u, 4u}) REQUIRE(m.Add(s, forge && s == 3 ? forged : disk[s]).ok());
        REQUIRE(m.complete());
        CHECK(m.tables(0).range_count() == threads);
        REQUIRE(m.late_failures().size() == (forge ? 1u : 0u));
        if (forge) CHECK(m.late_failures()[0].second == message);
        CHECK(encode(m.tables(0)) == encoded[forge]);  // every state's bytes
        CHECK(MergerText(m) == expected[forge]);
      }
}

}  // namespace fanfold
