// Tests for ShardProcessor's accounting: the counts it reports against the
// file itself, its four phase timings against a clock read around the call,
// and a bounded measure's limit still caught inside a batch of records; and
// the per-field present counts it puts in the partial for the end-of-run warnings.
#include <doctest/doctest.h>
#include <stdlib.h>

#include <cstring>
#include <filesystem>
#include <fstream>
#include <string>
#include <unistd.h>

#include "common/job/plan.h"
#include "common/partial/shard_processor.h"
#include "common/port/clock.h"
#include "common/port/files/file_util.h"

using namespace fanfold;

namespace {

std::unique_ptr<Plan> CompileJob(const std::string& measures, bool bare = false) {
  Result<JobSpec> spec = ParseJobSpec(
      bare ? R"({"inputs": {"files": ["a"]}, "measures": [)" + measures + "]}"
           : R"({"inputs": {"files": ["a"]}, "keep": "{/v} >= 0", "group": ["{/k}"], "measures": [)" + measures + "]}",
      "job.json");
  REQUIRE(spec.ok());
  Result<std::unique_ptr<Plan>> plan = CompilePlan(std::move(*spec), RecordFormat::kNdjson);
  REQUIRE(plan.ok());
  return std::move(plan.value());
}

// A temporary NDJSON file of n records {"k":"g<i%groups>","v":i}, removed at the end.
struct TempShard {
  explicit TempShard(int n, int groups = 5) {
    char tmpl[] = "/tmp/fanfold-shard-processor-test-XXXXXX";
    int fd = mkstemp(tmpl);
    REQUIRE(fd >= 0);
    close(fd);
    path = tmpl;
    for (int i = 0; i < n; ++i) text += R"({"k":"g)" + std::to_string(i % groups) + R"(","v":)" + std::to_string(i) + "}\n";
    REQUIRE(WriteFileAtomic(path, text).ok());
  }
  ~TempShard() { unlink(path.c_str()); }
  std::string path, text;
};

}  // namespace

TEST_CASE("the phases are measured, non-zero, and add up to the call") {
  // Intent: read, parse, aggregate and encode are each non-zero for a shard
  // with records, and together at most the time around Process (a clock
  // read outside it); the counts equal the file's (its size, its lines).
  std::unique_ptr<Plan> plan = CompileJob(R"({"name": "n", "fn": "count"}, {"name": "s", "fn": "sum", "of": "{/v}"})");
  TempShard shard(10000);  // not a multiple of the batch: the last batch is partial
  ShardProcessor processor(plan.get());
  for (int round = 0; round < 2; ++round) {  // the second reuses the reader and the batch
    ShardTask task;
    task.path = shard.path;
    std::string partial;
    const uint64_t t0 = MonotonicNanos();
    REQUIRE(processor.Process(task, &partial).ok());
    const uint64_t outside = MonotonicNanos() - t0;
    PartialHeader h;
    REQUIRE(DecodePartialHeader(partial, &h).ok());
    CHECK(h.records == 10000);
    CHECK(h.kept == 10000);
    CHECK(h.raw_bytes == shard.text.size());
    CHECK(h.compressed_bytes == shard.text.size());
    CHECK(h.read_ns > 0);
    CHECK(h.parse_ns > 0);
    CHECK(h.aggregate_ns > 0);
    CHECK(h.encode_ns > 0);
    const uint64_t phases = h.read_ns + h.parse_ns + h.aggregate_ns + h.encode_ns;
    CHECK(phases <= outside);
    CHECK(phases >= outside / 2);  // the gap is a few instructions either side of the phases
  }
}

TEST_CASE("a measure past its limit fails the shard from inside a batch") {
  // Intent: batching does not let a bounded measure run past its limit: the
  // record that would be number limit + 1 of a group fails the shard.
  std::unique_ptr<Plan> plan = CompileJob(R"({"name": "q", "fn": "quantile", "of": "{/v}", "at": [0.5], "limit": 100})");
  TempShard shard(1000);  // 200 values per group
  ShardProcessor processor(plan.get());
  ShardTask task;
  task.path = shard.path;
  std::string partial;
  Status s = processor.Process(task, &partial);
  CHECK(s.code() == Status::Code::kLimitExceeded);
  CHECK(s.message().find("limit of 100") != std::string::npos);
  // Intent: after the failure the processor serves the next shard with its own records only.
  TempShard small(5);  // one value per group
  task.path = small.path;
  REQUIRE(processor.Process(task, &partial).ok());
  PartialHeader h;
  REQUIRE(DecodePartialHeader(partial, &h).ok());
  CHECK(h.kept == 5);
}

TEST_CASE("a job that reads no field counts every record") {
  // Intent: with no field to read (one bare count) a record has no slots;
  // batching still counts all 1000 lines of the file.
  std::unique_ptr<Plan> plan = CompileJob(R"({"name": "n", "fn": "count"})", true);
  REQUIRE(plan->fields.size() == 0);
  TempShard shard(1000);
  ShardProcessor processor(plan.get());
  ShardTask task;
  task.path = shard.path;
  std::string partial;
  REQUIRE(processor.Process(task, &partial).ok());
  PartialHeader h;
  REQUIRE(DecodePartialHeader(partial, &h).ok());
  CHECK(h.records == 1000);
  CHECK(h.kept == 1000);
}

// Intent: a shard's partial counts, per raw field in the plan's order, the
// well-formed records in which the reader found it (null counts; malformed
// lines and records the filter drops are counted as read).
TEST_CASE("shard processor: per-field present counts reach the partial") {
  char tmpl[] = "/tmp/fanfold-processor-XXXXXX";
  const std::string dir = mkdtemp(tmpl);
  const std::string path = dir + "/s.ndjson";
  // Counted by hand: /k in lines 1, 2, 4 (line 3 is malformed); /v in
  // lines 1 and 4 (null counts); /feedr in none.
  std::ofstream(path) << "{\"k\": 1, \"v\": 2}\n{\"k\": 2}\n{\"k\": \n{\"k\": 3, \"v\": null}\n";
  Result<JobSpec> spec = ParseJobSpec(R"({"inputs": {"files": ["s.ndjson"]}, "keep": "{/k} > 1",
    "group": ["{/feedr}"], "measures": [{"name": "s", "fn": "sum", "of": "{/v}"}]})",
                                      dir + "/job.json");
  REQUIRE(spec.ok());
  Result<std::unique_ptr<Plan>> plan = CompilePlan(std::move(*spec), RecordFormat::kNdjson);
  REQUIRE(plan.ok());
  ShardProcessor processor(plan->get());
  ShardTask task;
  task.path = path;
  std::string bytes;
  REQUIRE(processor.Process(task, &bytes).ok());
  std::vector<MeasureConfig> configs;
  for (const auto& m : (*plan)->reductions[0].measures) configs.push_back(m.config);
  PartialState p(&configs);
  REQUIRE(DecodePartial(bytes, &p).ok());
  CHECK(p.header.records == 4);
  CHECK(p.header.kept == 2);
  CHECK(p.field_present == std::vector<uint64_t>{3, 0, 2});  // {/k}, {/feedr}, {/v}
  // The same processor on a shard of several batches (RecordBatch::kCapacity
  // records each): line i (from 0) has /k, and /v when i % 3 == 0, so 700
  // lines have 700 and 234 values; the first shard's counts are not carried.
  const std::string many = dir + "/m.ndjson";
  {
    std::ofstream out(many);
    for (int i = 0; i < 700; ++i) out << "{\"k\": " << i << (i % 3 == 0 ? ", \"v\": 1}\n" : "}\n");
  }
  task.path = many;
  REQUIRE(processor.Process(task, &bytes).ok());
  PartialState q(&configs);
  REQUIRE(DecodePartial(bytes, &q).ok());
  CHECK(q.header.records == 700);
  CHECK(q.field_present == std::vector<uint64_t>{700, 0, 234});
  std::filesystem::remove_all(dir);
}

// Intent: a worker with a spare core (encode_threaded: the body compressed on
// a helper thread while it is written) writes the very partial a worker
// without one writes — but for the measured times in the header — for a
// many-group shard (a body of megabytes) and a small one, shard after shard.
TEST_CASE("shard processor: the partial is the same with and without the encode helper thread") {
  std::unique_ptr<Plan> plan = CompileJob(R"({"name": "n", "fn": "count"}, {"name": "s", "fn": "sum", "of": "{/v}"})");
  TempShard many(150000, 70000);
  TempShard few(3000);
  ShardProcessor inline_processor(plan.get());
  ShardProcessor threaded(plan.get());
  threaded.encode_threaded = true;
  for (const TempShard* shard : {&many, &few, &many}) {
    ShardTask task;
    task.path = shard->path;
    std::string a;
    std::string b;
    REQUIRE(inline_processor.Process(task, &a).ok());
    REQUIRE(threaded.Process(task, &b).ok());
    REQUIRE(a.size() == b.size());
    // Bytes [120, 160) are the four phase times and the checksum over them.
    CHECK(a.substr(0, 120) == b.substr(0, 120));
    CHECK(a.substr(kPartialHeaderSize) == b.substr(kPartialHeaderSize));
    PartialHeader h;
    CHECK(DecodePartialHeader(b, &h).ok());
    uint64_t raw_len = 0;  // the body's length before compression, at offset 104
    std::memcpy(&raw_len, b.data() + 104, 8);
    if (shard == &many) CHECK(raw_len > BodyCompressor::kMinBytes);  // the one streamed
    else CHECK(raw_len < BodyCompressor::kMinBytes);
  }
}
