// Tests for the worker's group-table budget (common/partial/table_overflow.h,
// docs/worker-table-budget.md): a shard whose tables run past any budget —
// down to one group a table — gives the same partial as with no budget: the
// same counts in the header and the same body bytes (every group table
// included), for every measure kind; no temporary file is left behind; a
// bounded measure past its limit among the overflow's keys still fails the
// shard with the usual message. The reference is the unbounded run of the
// same code path (its own correctness against sqlite3 and Python is checked
// by the e2e tests, tests/e2e/test_worker_table_budget.py).
#include <doctest/doctest.h>
#include <stdlib.h>
#include <unistd.h>

#include <filesystem>
#include <random>
#include <string>

#include "common/job/plan.h"
#include "common/partial/partial_codec.h"
#include "common/partial/shard_processor.h"
#include "common/partial/table_overflow.h"
#include "common/partial/worker_group_table.h"
#include "common/port/files/file_util.h"

using namespace fanfold;

namespace {

// A fresh directory set as TMPDIR while it lives (the overflow's files go
// there), and the shard file inside it.
struct OverflowDir {
  OverflowDir() {
    char tmpl[] = "/tmp/fanfold-overflow-test-XXXXXX";
    dir = mkdtemp(tmpl);
    const char* old = getenv("TMPDIR");
    if (old != nullptr) saved = old, had = true;
    setenv("TMPDIR", (dir + "/tmp").c_str(), 1);
    std::filesystem::create_directories(dir + "/tmp");
  }
  ~OverflowDir() {
    if (had) setenv("TMPDIR", saved.c_str(), 1);
    else unsetenv("TMPDIR");
    std::filesystem::remove_all(dir);
  }
  size_t temp_files() const {
    size_t n = 0;
    for ([[maybe_unused]] const auto& e : std::filesystem::directory_iterator(dir + "/tmp")) ++n;
    return n;
  }
  std::string dir, saved;
  bool had = false;
};

// `records` NDJSON lines over about `keys` keys (two parts: a text and an
// integer), with values that make float sums order-sensitive (1e16 beside
// 0.1), strings, nulls, missing fields and a few malformed lines.
std::string MakeShard(int records, int keys, unsigned seed) {
  std::mt19937_64 rng(seed);
  std::string text;
  static const char* kValues[] = {"0.1", "1e16", "-1e16", "3", "\"7.5\"", "null", "\"x\"", "2.5e-3", "-0"};
  for (int i = 0; i < records; ++i) {
    if (i % 997 == 5) {
      text += "{\"k\": \n";  // malformed
      continue;
    }
    const int k = static_cast<int>(rng() % static_cast<uint64_t>(keys));
    text += "{\"k\":\"u" + std::to_string(k % 101) + "\",\"n\":" + std::to_string(k / 101);
    if (rng() % 10 != 0) text += std::string(",\"v\":") + kValues[rng() % 9];
    text += ",\"w\":" + std::to_string(static_cast<int>(rng() % 1000) - 500) + ".25";
    if (rng() % 3 == 0) text += ",\"f\":\"c" + std::to_string(rng() % 4) + "\"";
    text += "}\n";
  }
  return text;
}

std::unique_ptr<Plan> CompileJob(const std::string& dir, const std::string& body) {
  Result<JobSpec> spec = ParseJobSpec(R"({"inputs": {"files": ["s.ndjson"]}, )" + body + "}", dir + "/job.json");
  REQUIRE(spec.ok());
  Result<std::unique_ptr<Plan>> plan = CompilePlan(std::move(*spec), RecordFormat::kNdjson);
  REQUIRE_MESSAGE(plan.ok(), plan.status().message());
  return std::move(plan.value());
}

// Every measure kind, one with an "only" condition.
const char* kAllMeasures = R"J("measures": [
  {"name": "c", "fn": "count"},
  {"name": "cp", "fn": "count_present", "of": "{/v}"},
  {"name": "s", "fn": "sum", "of": "{/v}"},
  {"name": "m", "fn": "mean", "of": "{/w}"},
  {"name": "va", "fn": "variance", "of": "{/v}"},
  {"name": "sd", "fn": "stddev", "of": "{/w}"},
  {"name": "lo", "fn": "min", "of": "{/v}"},
  {"name": "hi", "fn": "max", "of": "{/f}"},
  {"name": "q", "fn": "quantile", "of": "{/w}", "at": [0.5, 0.9]},
  {"name": "dd", "fn": "ddsketch", "of": "{/w}", "at": [0.5]},
  {"name": "d", "fn": "distinct", "of": "{/f}"},
  {"name": "h", "fn": "hyperloglog", "of": "{/w}"},
  {"name": "t", "fn": "top", "of": "{/f}", "k": 2},
  {"name": "al", "fn": "at_lowest", "of": "{/f}", "by": "{/w}"},
  {"name": "ah", "fn": "at_highest", "of": "{/v}", "by": "{/w}"},
  {"name": "hg", "fn": "histogram", "of": "{/w}", "from": -500, "to": 500, "width": 100},
  {"name": "cw", "fn": "sum", "of": "{/w}", "only": "has({/f})"}
])J";

struct Outcome {
  Status status;
  PartialHeader header;
  std::string body;  // decompressed
};

Outcome Process(const Plan& plan, const std::string& path, uint64_t table_bytes) {
  ShardProcessor processor(&plan);
  processor.table_bytes_override = table_bytes;
  ShardTask task;
  task.path = path;
  std::string partial;
  Outcome out;
  out.status = processor.Process(task, &partial);
  if (!out.status.ok()) return out;
  OpenedPartial opened;
  REQUIRE(OpenPartial(partial, &opened).ok());
  out.header = opened.header;
  out.body = opened.body;
  return out;
}

void CheckSame(const Outcome& a, const Outcome& b) {
  REQUIRE(a.status.ok());
  REQUIRE(b.status.ok());
  CHECK(a.header.records == b.header.records);
  CHECK(a.header.kept == b.header.kept);
  CHECK(a.header.malformed == b.header.malformed);
  CHECK(a.header.raw_bytes == b.header.raw_bytes);
  CHECK(a.body.size() == b.body.size());
  CHECK(a.body == b.body);  // samples, field and lookup counts, every group table
}

}  // namespace

TEST_CASE("table overflow: any budget gives the unbounded partial's bytes, every measure kind") {
  OverflowDir d;
  const std::string path = d.dir + "/s.ndjson";
  REQUIRE(WriteFileAtomic(path, MakeShard(20000, 6000, 7)).ok());
  std::unique_ptr<Plan> plan = CompileJob(d.dir, R"("group": ["{/k}", "{/n}"], )" + std::string(kAllMeasures));
  const Outcome whole = Process(*plan, path, 0);
  REQUIRE(whole.status.ok());
  // From a few groups a table (many partitions, many passes each) to one
  // big enough for everything.
  for (uint64_t budget : {uint64_t{3000}, uint64_t{40000}, uint64_t{400000}, uint64_t{1} << 30}) {
    CAPTURE(budget);
    CheckSame(whole, Process(*plan, path, budget));
    CHECK(d.temp_files() == 0);
  }
}

TEST_CASE("table overflow: two reductions share the budget, a filter and derived keys") {
  OverflowDir d;
  const std::string path = d.dir + "/s.ndjson";
  REQUIRE(WriteFileAtomic(path, MakeShard(4000, 1500, 11)).ok());
  std::unique_ptr<Plan> plan = CompileJob(d.dir, R"J("keep": "{/w} > -400",
    "reductions": [
      {"name": "by_key", "group": ["{/k}", "{/n}"], "measures": [{"name": "c", "fn": "count"}, {"name": "s", "fn": "sum", "of": "{/v}"}]},
      {"name": "by_n", "keep": "has({/f})", "group": ["lower({/f})", "{/n}"],
       "measures": [{"name": "m", "fn": "mean", "of": "{/w}"}, {"name": "t", "fn": "top", "of": "{/k}", "k": 3}]}
    ])J");
  const Outcome whole = Process(*plan, path, 0);
  REQUIRE(whole.status.ok());
  // 2: one group a table (each share is 1 byte), every pass takes one key.
  for (uint64_t budget : {uint64_t{2}, uint64_t{20000}, uint64_t{150000}}) {
    CAPTURE(budget);
    CheckSame(whole, Process(*plan, path, budget));
    CHECK(d.temp_files() == 0);
  }
}

// Intent: one ShardProcessor serving shard after shard (it keeps its
// aggregator's buffers and restarts it per shard) gives every shard the
// partial a fresh processor gives: after a big shard, after one whose
// tables overflowed (the budget from the task), after a failed one (a line
// cut mid-record past the job's bad_record_limit), with no overflow file
// left behind after any of them.
TEST_CASE("table overflow: a reused processor gives each shard a fresh processor's partial") {
  OverflowDir d;
  const std::string big = d.dir + "/big.ndjson", small = d.dir + "/small.ndjson", bad = d.dir + "/bad.ndjson";
  REQUIRE(WriteFileAtomic(big, MakeShard(6000, 3000, 21)).ok());
  REQUIRE(WriteFileAtomic(small, MakeShard(25, 40, 22)).ok());
  REQUIRE(WriteFileAtomic(bad, "{\"k\": \n{\"k\": \n").ok());  // two malformed lines of two
  Result<JobSpec> spec = ParseJobSpec(R"({"inputs": {"files": ["s.ndjson"], "bad_record_limit": 0.5},
    "group": ["{/k}", "{/n}"], )" + std::string(kAllMeasures) + "}",
                                      d.dir + "/job.json");
  REQUIRE(spec.ok());
  Result<std::unique_ptr<Plan>> compiled = CompilePlan(std::move(*spec), RecordFormat::kNdjson);
  REQUIRE(compiled.ok());
  const std::unique_ptr<Plan> plan = std::move(compiled.value());
  ShardProcessor reused(plan.get());
  const struct {
    const std::string* path;
    uint64_t budget;  // the task's; 0 = the default
  } steps[] = {{&big, 0}, {&small, 0}, {&big, 30000}, {&small, 0}, {&bad, 0}, {&small, 2}, {&big, 0}, {&small, 0}};
  for (const auto& step : steps) {
    CAPTURE(*step.path);
    CAPTURE(step.budget);
    ShardTask task;
    task.path = *step.path;
    task.table_bytes = step.budget;
    std::string partial;
    Outcome got;
    got.status = reused.Process(task, &partial);
    const Outcome want = Process(*plan, *step.path, step.budget);
    CHECK(d.temp_files() == 0);
    if (step.path == &bad) {
      CHECK(!got.status.ok());
      CHECK(got.status.message() == want.status.message());
      continue;
    }
    REQUIRE(got.status.ok());
    OpenedPartial opened;
    REQUIRE(OpenPartial(partial, &opened).ok());
    got.header = opened.header;
    got.body = opened.body;
    CheckSame(want, got);
  }
}

TEST_CASE("table overflow: a bounded measure past its limit among the overflow's keys fails the shard") {
  // Intent: the overflow passes catch a limit as the table does, with the
  // same message; and nothing is left in the temporary directory.
  OverflowDir d;
  const std::string path = d.dir + "/s.ndjson";
  std::string text;
  for (int i = 0; i < 3000; ++i) text += "{\"k\":" + std::to_string(i < 2000 ? i : 1999) + ",\"w\":" + std::to_string(i) + "}\n";
  REQUIRE(WriteFileAtomic(path, text).ok());  // key 1999 (the last new key) gets 1,001 values
  std::unique_ptr<Plan> plan =
      CompileJob(d.dir, R"("group": ["{/k}"], "measures": [{"name": "q", "fn": "quantile", "of": "{/w}", "at": [0.5], "limit": 1000}])");
  const Outcome whole = Process(*plan, path, 0);
  const Outcome small = Process(*plan, path, 5000);
  CHECK(whole.status.code() == Status::Code::kLimitExceeded);
  CHECK(small.status.code() == Status::Code::kLimitExceeded);
  CHECK(small.status.message() == whole.status.message());
  CHECK(d.temp_files() == 0);
}

TEST_CASE("table overflow: fed directly, partitioned again at every depth, equals one unbounded table") {
  // Intent: the overflow alone (no reader): records of keys a full table
  // does not hold, some skipping a measure, aggregated through partitions
  // split again (a low threshold) and passes, encode exactly as one
  // WorkerGroupTable that took every record.
  OverflowDir d;
  std::unique_ptr<Plan> plan = CompileJob(d.dir, R"J("group": ["{/k}"], "measures": [
    {"name": "c", "fn": "count"}, {"name": "s", "fn": "sum", "of": "{/v}"}, {"name": "m", "fn": "mean", "of": "{/v}"},
    {"name": "al", "fn": "at_lowest", "of": "{/k}", "by": "{/v}"}])J");
  const std::vector<MeasureConfig>& configs = plan->reductions[0].configs;
  std::vector<size_t> strides;
  for (const CompiledMeasure& m : plan->reductions[0].measures) strides.push_back(m.args.size());
  std::mt19937_64 rng(5);
  struct Rec {
    std::string key;
    double v;
    bool skip_sum;
  };
  std::vector<Rec> recs;
  for (int i = 0; i < 30000; ++i)
    recs.push_back({"key-" + std::to_string(rng() % 9000), (rng() % 2 ? 1e16 : 0.1) * (rng() % 3 ? 1 : -1), rng() % 5 == 0});
  auto feed = [&](WorkerGroupTable& t, uint32_t g, const Rec& r) {
    const Value v = Value::Number(r.v);
    const Value by[2] = {Value::String(r.key), v};
    REQUIRE(t.column(0).AddBatch(&g, nullptr, 0, 1) == 1);
    if (!r.skip_sum) REQUIRE(t.column(1).AddBatch(&g, &v, 1, 1) == 1);
    REQUIRE(t.column(2).AddBatch(&g, &v, 1, 1) == 1);
    REQUIRE(t.column(3).AddBatch(&g, by, 2, 1) == 1);
  };
  WorkerGroupTable whole(&configs);
  for (const Rec& r : recs) feed(whole, whole.FindOrAdd(r.key), r);
  std::string want;
  ByteWriter ww(&want);
  whole.Encode(ww);
  for (uint64_t budget : {uint64_t{400}, uint64_t{6000}}) {
    CAPTURE(budget);
    auto table = std::make_unique<WorkerGroupTable>(&configs);
    table->set_budget(budget);
    TableOverflow overflow(&configs, strides, budget);
    overflow.set_split_again_records(8);
    for (const Rec& r : recs) {
      const uint32_t g = table->FindOrAdd(r.key);
      if (g != WorkerGroupTable::kOverBudget) {
        feed(*table, g, r);
        continue;
      }
      const Value v = Value::Number(r.v);
      const Value by[2] = {Value::String(r.key), v};
      overflow.BeginRecord(r.key);
      overflow.AddArgs(nullptr);
      if (r.skip_sum) overflow.SkipMeasure(); else overflow.AddArgs(&v);
      overflow.AddArgs(&v);
      overflow.AddArgs(by);
      REQUIRE(overflow.EndRecord().ok());
    }
    REQUIRE(overflow.records() > 0);
    int over = -1;
    REQUIRE(overflow.Finish(std::move(table), &over).ok());
    CHECK(overflow.group_count() == whole.group_count());
    std::string got;
    ByteWriter gw(&got);
    REQUIRE(overflow.Encode(gw).ok());
    CHECK(got.size() == want.size());
    CHECK(got == want);
    CHECK(d.temp_files() == 0);
  }
}
