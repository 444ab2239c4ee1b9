// A worker's ShardProcessor kept across shards: the group table presized
// from the previous shard stays within its share of the budget, and after a
// shard that failed (inside a batch, while the CSV reader lent its strings)
// the next shards' partials are a fresh processor's. Sources are the
// contract comments named beside each check.
#include <doctest/doctest.h>

#include <stdlib.h>

#include <filesystem>
#include <string>
#include <vector>

#include "common/job/plan.h"
#include "common/partial/partial_codec.h"
#include "common/partial/shard_processor.h"
#include "common/partial/worker_group_table.h"
#include "common/port/files/file_util.h"

namespace fanfold {
namespace {

// Claim (common/partial/worker_group_table.cc, Reserve; docs/worker-table-budget.md):
// "The index's slots ... stay within a quarter of the budget". A presized
// table's index counts toward its budget, so a larger index turns the table
// full earlier (more records to the overflow files) than the documented bound.
TEST_CASE("kept processor: a presized index stays within a quarter of its table's budget") {
  std::vector<MeasureConfig> count_only(1);  // kind defaults to count
  for (size_t budget = 4096; budget <= (size_t{64} << 20); budget = budget * 5 / 4) {
    CAPTURE(budget);
    WorkerGroupTable t(&count_only);
    t.set_budget(budget);
    t.Reserve(size_t{1} << 30);  // the previous shard held far more groups than fit
    CHECK(t.ApproxBytes() <= budget / 4);
  }
}

// Claim (common/partial/batch_aggregator.h, common/input/record_reader.h):
// one ShardProcessor kept across CSV shards gives each the partial a fresh
// processor gives, also after a shard that failed inside a batch while the
// CSV reader had its cells on loan (a measure past its limit), so the loan
// (RecordBatch::set_copy_strings) and the restarted aggregator carry nothing
// over. Invented data; several chunks a shard (cells quoted, "" escapes).
TEST_CASE("kept processor: a kept processor over CSV shards, after a failure on loan, matches a fresh one") {
  char tmpl[] = "/tmp/fanfold-review-XXXXXX";
  const std::string dir = mkdtemp(tmpl);
  auto shard = [&](const std::string& name, int rows, int kinds) {
    std::string text = "k,v,s\n";
    for (int i = 0; i < rows; ++i)
      text += "\"k" + std::to_string(i % 37) + "\"," + std::to_string(i % 11) + ".5,\"s \"\"" +
              std::to_string(i % kinds) + "\"\", " + std::string(i % 5, 'x') + "\"\n";
    REQUIRE(WriteFileAtomic(dir + "/" + name, text).ok());
    return dir + "/" + name;
  };
  const std::string big = shard("big.csv", 120000, 20), bad = shard("bad.csv", 5000, 400), small = shard("small.csv", 50, 5);
  Result<JobSpec> spec = ParseJobSpec(R"({"inputs": {"files": ["*.csv"], "format": "csv"}, "group": ["{k}"],
    "measures": [{"name": "c", "fn": "count"}, {"name": "d", "fn": "distinct", "of": "{s}", "limit": 50},
                 {"name": "t", "fn": "top", "of": "{s}", "k": 2}, {"name": "m", "fn": "mean", "of": "{v}"}]})",
                                      dir + "/job.json");
  REQUIRE(spec.ok());
  Result<std::unique_ptr<Plan>> plan = CompilePlan(std::move(*spec), RecordFormat::kCsv);
  REQUIRE_MESSAGE(plan.ok(), plan.status().message());
  ShardProcessor kept(plan->get());
  for (const std::string* path : {&big, &bad, &small, &big, &bad, &big}) {
    CAPTURE(*path);
    ShardTask task;
    task.path = *path;
    std::string got, want;
    const Status g = kept.Process(task, &got);
    ShardProcessor fresh(plan->get());
    const Status w = fresh.Process(task, &want);
    REQUIRE(g.ok() == w.ok());
    if (path == &bad) {
      CHECK(!g.ok());
      CHECK(g.message() == w.message());
      continue;
    }
    OpenedPartial a, b;
    REQUIRE(OpenPartial(got, &a).ok());
    REQUIRE(OpenPartial(want, &b).ok());
    CHECK(a.header.records == b.header.records);
    CHECK(a.body == b.body);
  }
  std::filesystem::remove_all(dir);
}

}  // namespace
}  // namespace fanfold
