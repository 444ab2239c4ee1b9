// Tests for ShardProcessor's accounting: the counts it reports against the
// file itself, its four phase timings against a clock read around the call,
// and a bounded measure's limit still caught inside a batch of records.
#include <doctest/doctest.h>

#include <string>
#include <unistd.h>

#include "common/job/plan.h"
#include "common/partial/shard_processor.h"
#include "common/port/clock.h"
#include "common/port/file_util.h"

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

// A temporary NDJSON file of n records {"k":"g<i%5>","v":i}, removed at the end.
struct TempShard {
  explicit TempShard(int n) {
    char tmpl[] = "/tmp/fanfold-shard-processor-test-XXXXXX";
    int fd = mkstemp(tmpl);
    REQUIRE(fd >= 0);
    close(fd);
    path = tmpl;
    for (int i = 0; i < n; ++i) text += R"({"k":"g)" + std::to_string(i % 5) + R"(","v":)" + std::to_string(i) + "}\n";
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
