// WorkerGroupTable: for generated record streams and every measure kind, the
// worker's table (flat columns, batches per measure) encodes exactly the
// bytes GroupTable (one MeasureState per group and measure, fed per record)
// encodes for the same records — the old path is the reference.
#include "common/partial/worker_group_table.h"

#include <deque>
#include <doctest/doctest.h>

#include <string>
#include <vector>

#include "common/partial/group_key.h"
#include "common/partial/group_table.h"
#include "tests/measures/measure_test_util.h"

namespace fanfold {
namespace {

using testing::TestLcg;

// One config of every kind, some twice with other options.
std::vector<MeasureConfig> EveryKind() {
  std::vector<MeasureConfig> c;
  auto add = [&c](MeasureKind k) -> MeasureConfig& {
    c.emplace_back();
    c.back().kind = k;
    return c.back();
  };
  add(MeasureKind::kCount);
  add(MeasureKind::kCountPresent);
  add(MeasureKind::kSum);
  add(MeasureKind::kMean);
  add(MeasureKind::kVariance);
  add(MeasureKind::kStddev);
  add(MeasureKind::kMin);
  add(MeasureKind::kMax);
  add(MeasureKind::kQuantile).probabilities = {0.1, 0.5, 0.99};
  MeasureConfig& dd = add(MeasureKind::kDdSketch);
  dd.probabilities = {0.5, 0.95};
  dd.alpha = 0.02;
  add(MeasureKind::kDistinct);
  add(MeasureKind::kHyperLogLog).precision = 6;
  add(MeasureKind::kTop).k = 3;
  add(MeasureKind::kAtLowest);
  add(MeasureKind::kAtHighest);
  add(MeasureKind::kHistogram).edges = {-100, -1, 0, 0.5, 7, 1e6};
  return c;
}

// Only measures whose states have a bounded encoding (count, count_present,
// sum): the table then writes its groups by pointer (EncodeBounded), which
// this set exercises against GroupTable's ByteWriter path.
std::vector<MeasureConfig> BoundedKinds() {
  std::vector<MeasureConfig> c(4);
  c[0].kind = MeasureKind::kCount;
  c[1].kind = MeasureKind::kSum;
  c[2].kind = MeasureKind::kCountPresent;
  c[3].kind = MeasureKind::kSum;
  return c;
}

// A value of every shape a measure meets: missing, null, bools, integers
// (small, negative, beyond int64), doubles (with -0.0 and infinities),
// numeric and other text.
// `strings` keeps the texts the values view: a deque, so a later push_back
// never moves them.
Value RandomValue(TestLcg& g, std::deque<std::string>* strings) {
  switch (g.Next() % 12) {
    case 0: return Value::Missing();
    case 1: return Value::Null();
    case 2: return Value::Bool(g.Next() % 2 == 0);
    case 3: return Value::Int(static_cast<int64_t>(g.Next() % 200) - 100);
    case 4: return Value::Uint(UINT64_MAX - g.Next() % 5);
    case 5: return Value::Number(-0.0);
    case 6: return Value::Number(g.Next() % 50 == 0 ? 1e308 * 10 : (g.Uniform() - 0.5) * 1e4);
    case 7: return Value::Int(static_cast<int64_t>(g.Next()) << 32);
    case 8: strings->push_back(std::to_string(g.Next() % 1000)); return Value::String(strings->back());
    case 9: strings->push_back("lamp-" + std::to_string(g.Next() % 37)); return Value::String(strings->back());
    default: return Value::Number(static_cast<double>(g.Next() % 64) / 4);
  }
}

std::string Encoded(const GroupTable& t) {
  std::string out;
  ByteWriter w(&out);
  t.Encode(w);
  return out;
}

std::string Encoded(const WorkerGroupTable& t) {
  std::string out;
  ByteWriter w(&out);
  t.Encode(w);
  return out;
}

// Intent: the worker table is a drop-in for GroupTable's encoding, for every
// kind, whatever the batch boundaries, record shapes and group counts.
TEST_CASE("worker_group_table: encodes GroupTable's bytes for every measure kind") {
  for (const std::vector<MeasureConfig>& configs : {EveryKind(), BoundedKinds()})
  for (uint64_t seed = 1; seed <= 60; ++seed) {
    const size_t m = configs.size();
    CAPTURE(m);
    TestLcg g(seed * 7919);
    GroupTable reference(&configs);
    WorkerGroupTable table(&configs);
    // Seed 1: one group of 5,000 records, so that states pass 128 and
    // 16,384 bytes (two- and three-byte length prefixes).
    const size_t groups = seed == 1 ? 1 : 1 + g.Next() % (seed % 3 == 0 ? 2000 : 40);
    const size_t records = seed == 1 ? 5000 : g.Next() % 3000;
    std::deque<std::string> strings;
    // The batch being queued: per measure, the groups and two arguments each.
    std::vector<std::vector<uint32_t>> batch_groups(m);
    std::vector<std::vector<Value>> batch_args(m);
    auto flush = [&] {
      for (size_t j = 0; j < m; ++j) {
        const size_t n = batch_groups[j].size();
        CHECK(table.column(j).AddBatch(batch_groups[j].data(), batch_args[j].data(), 2, n) == n);
        batch_groups[j].clear();
        batch_args[j].clear();
      }
    };
    for (size_t i = 0; i < records; ++i) {
      std::string key;
      AppendKeyValue(Value::Int(static_cast<int64_t>(g.Next() % groups)), &key);
      if (g.Next() % 4 == 0) AppendKeyValue(Value::String(i % 2 ? "a" : "bb"), &key);
      // Keys of 128 bytes and more (a two-byte length) in every fifth
      // seed; the empty key (a job without group fields) in seed 2.
      if (seed % 5 == 0 && g.Next() % 3 == 0) AppendKeyValue(Value::String(std::string(120 + i % 20, 'x')), &key);
      if (seed == 2) key.clear();
      MeasureState* const* states = reference.FindOrAdd(key);
      const uint32_t id = table.FindOrAdd(key);
      for (size_t j = 0; j < m; ++j) {
        if (g.Next() % 10 == 0) continue;  // this measure's `only` said no
        Value args[2] = {RandomValue(g, &strings), RandomValue(g, &strings)};
        REQUIRE(states[j]->Add(args));
        batch_groups[j].push_back(id);
        batch_args[j].push_back(args[0]);
        batch_args[j].push_back(args[1]);
      }
      if (g.Next() % 97 == 0) flush();  // batches of any length
    }
    flush();
    CHECK(table.group_count() == reference.group_count());
    CHECK(Encoded(table) == Encoded(reference));
    // EncodedBytes is exact for bounded states (count, sum), else 0.
    CHECK(table.EncodedBytes() == (m == 4 ? Encoded(table).size() : 0));
  }
}

// Intent: group ids count up in order of first appearance and a key is
// found again, however many groups there are (the index grows past rehashes).
TEST_CASE("worker_group_table: ids by first appearance, found again") {
  std::vector<MeasureConfig> configs(1);
  WorkerGroupTable t(&configs);
  for (int64_t i = 0; i < 100000; ++i) {
    std::string key;
    AppendKeyValue(Value::Int(i * 7), &key);
    REQUIRE(t.FindOrAdd(key) == static_cast<uint32_t>(i));
  }
  for (int64_t i = 99999; i >= 0; i -= 3) {
    std::string key;
    AppendKeyValue(Value::Int(i * 7), &key);
    REQUIRE(t.FindOrAdd(key) == static_cast<uint32_t>(i));
  }
  CHECK(t.group_count() == 100000);
  CHECK(t.key(5).size() == 9);  // tag + 8 bytes
}

// Intent: a bounded measure past its limit stops the batch at that input.
TEST_CASE("worker_group_table: a bounded measure past its limit names the input") {
  std::vector<MeasureConfig> configs(1);
  configs[0].kind = MeasureKind::kDistinct;
  configs[0].limit = 3;
  WorkerGroupTable t(&configs);
  const uint32_t id = t.FindOrAdd("k");
  std::vector<uint32_t> groups(6, id);
  std::vector<Value> args = {Value::Int(1), Value::Int(2), Value::Int(1), Value::Int(3), Value::Int(4), Value::Int(5)};
  CHECK(t.column(0).AddBatch(groups.data(), args.data(), 1, 6) == 4);
}

// Intent: under a budget the table turns full at exactly the first new group
// at which ApproxBytes() plus the sort's bytes pass the budget (the header's
// rule), although it asks its columns for their bytes only now and then;
// keys of every length (past a one-byte varint too), fixed-size and
// per-group-object columns, a presized index; ids stay those of first
// appearance either way.
TEST_CASE("worker_group_table: the budget's rule holds group by group") {
  std::vector<MeasureConfig> sum_only(2);
  sum_only[1].kind = MeasureKind::kSum;
  std::vector<MeasureConfig> every = EveryKind();
  for (const std::vector<MeasureConfig>* configs : {&sum_only, &every}) {
    for (const size_t budget : {size_t{1}, size_t{5000}, size_t{70000}, size_t{600000}, size_t{3000000}}) {
      for (const size_t reserve : {size_t{0}, size_t{3000}}) {
        CAPTURE(configs->size());
        CAPTURE(budget);
        CAPTURE(reserve);
        WorkerGroupTable t(configs);
        t.set_budget(budget);
        t.Reserve(reserve);
        TestLcg g(budget + reserve);
        bool full = false;
        for (uint32_t i = 0; i < 40000 && !full; ++i) {
          std::string key(g.Next() % 7 == 0 ? 100 + g.Next() % 200 : g.Next() % 20, 'k');
          for (char& c : key) c = static_cast<char>('a' + g.Next() % 26);
          key += std::to_string(i);  // distinct
          const uint32_t id = t.FindOrAdd(key);
          REQUIRE(id == i);
          full = t.ApproxBytes() + t.group_count() * WorkerGroupTable::kSortBytesPerGroup > budget;
          REQUIRE(t.full() == full);
        }
        CHECK(full);  // every budget here is reached
        CHECK(t.FindOrAdd("a key never seen") == WorkerGroupTable::kOverBudget);
      }
    }
  }
}

// Intent: a cleared table (kept for the next shard) behaves as a new one
// (the header's claim for Clear): for every budget and presize, group by
// group the same id, the same ApproxBytes (so full at the same group) and
// at the end the same encoding, although it keeps the memory of a larger
// table filled before (an index, key list, arena and columns grown past
// what the new table needs, and kept chunks of the arena too small for a
// long key).
TEST_CASE("worker_group_table: a cleared table counts, fills and encodes as a new one") {
  const std::vector<MeasureConfig> configs = EveryKind();
  std::deque<std::string> strings;
  for (const size_t budget : {size_t{0}, size_t{20000}, size_t{400000}, size_t{3000000}}) {
    for (const size_t reserve : {size_t{0}, size_t{500}, size_t{50000}}) {
      CAPTURE(budget);
      CAPTURE(reserve);
      WorkerGroupTable kept(&configs);
      TestLcg g(budget * 7 + reserve);
      for (uint32_t i = 0; i < 30000; ++i) kept.FindOrAdd("before-" + std::to_string(i) + std::string(i % 97, 'x'));
      for (size_t m = 0; m < configs.size(); ++m) {  // every column grown, its states fed
        std::vector<Value> args(2, Value::Int(static_cast<int64_t>(m)));
        const uint32_t last = 29999;
        REQUIRE(kept.column(m).AddBatch(&last, args.data(), 2, 1) == 1);
      }
      REQUIRE(kept.ApproxBytes() > 30000 * configs.size());
      kept.Clear();
      CHECK(kept.group_count() == 0);
      WorkerGroupTable fresh(&configs);
      for (WorkerGroupTable* t : {&kept, &fresh}) {
        t->set_budget(budget);
        t->Reserve(reserve);
      }
      CHECK(kept.ApproxBytes() == fresh.ApproxBytes());
      for (uint32_t i = 0; i < 9000 && !fresh.full(); ++i) {
        // Keys repeat (ids found again), some longer than an arena chunk.
        const uint64_t k = g.Next() % 6000;
        const std::string key =
            "k" + std::to_string(k) + std::string(k % 500 == 0 ? 70000 : k % 23, static_cast<char>('a' + k % 26));
        const uint32_t a = kept.FindOrAdd(key), b = fresh.FindOrAdd(key);
        REQUIRE(a == b);
        REQUIRE(kept.ApproxBytes() == fresh.ApproxBytes());
        REQUIRE(kept.full() == fresh.full());
        if (a == WorkerGroupTable::kOverBudget) continue;
        std::vector<Value> args(2);
        for (Value& v : args) v = RandomValue(g, &strings);
        for (size_t m = 0; m < configs.size(); ++m) {
          REQUIRE(kept.column(m).AddBatch(&a, args.data(), 2, 1) == 1);
          REQUIRE(fresh.column(m).AddBatch(&b, args.data(), 2, 1) == 1);
        }
      }
      CHECK(kept.group_count() == fresh.group_count());
      CHECK(Encoded(kept) == Encoded(fresh));
    }
  }
}

}  // namespace
}  // namespace fanfold
