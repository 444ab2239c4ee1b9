// Tests for ShardProcessor's per-field present counts, which travel in the
// partial state to the end-of-run warnings.
#include "common/partial/shard_processor.h"

#include <stdlib.h>

#include <filesystem>
#include <fstream>
#include <string>

#include <doctest/doctest.h>

#include "common/job/job_spec.h"

using namespace fanfold;

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
  for (const auto& m : (*plan)->measures) configs.push_back(m.config);
  PartialState p(&configs);
  REQUIRE(DecodePartial(bytes, &p).ok());
  CHECK(p.header.records == 4);
  CHECK(p.header.kept == 2);
  CHECK(p.field_present == std::vector<uint64_t>{3, 0, 2});  // {/k}, {/feedr}, {/v}
  std::filesystem::remove_all(dir);
}
