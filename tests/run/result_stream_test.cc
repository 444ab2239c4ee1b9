// WriteResultStream on the path where rows stream in order from sorted runs
// (result_stream.cc, StreamInOrder): a stop request is honoured while the
// merge walks, even when the rows step drops every row (so no row ever
// reaches the writing thread, which polls once per batch it receives).
#include "coordinator/run/result/result_stream.h"

#include <doctest/doctest.h>
#include <unistd.h>

#include <atomic>
#include <filesystem>
#include <string>

#include "common/job/job_spec.h"
#include "coordinator/run/merger.h"
#include "tests/run/merger_test_util.h"

namespace fanfold {
namespace {

std::unique_ptr<Plan> DropAllPlan() {
  const char* job = R"({"inputs": {"files": ["x.ndjson"]}, "group": ["{/k}"],
    "measures": [{"name": "n", "fn": "count"}], "rows": {"keep": "n > 1000000"}, "emit": {"format": "csv"}})";
  Result<JobSpec> spec = ParseJobSpec(job, "test.json");
  REQUIRE(spec.ok());
  Result<std::unique_ptr<Plan>> plan = CompilePlan(std::move(*spec), RecordFormat::kNdjson);
  REQUIRE(plan.ok());
  return std::move(*plan);
}

// Intent: a stop request (Ctrl-C) ends the output stage with Interrupted
// while the merge walks 40,000 groups that the rows step all drops; without
// a poll in the walk, the stage ran to its end and wrote an empty result.
// Asked to go on, the same walk writes the header alone (no row kept).
TEST_CASE("result_stream: a stop request is honoured while every row is dropped") {
  const auto plan = DropAllPlan();
  const std::string dir = std::filesystem::temp_directory_path() / ("ff-result-stream-" + std::to_string(getpid()));
  std::filesystem::create_directories(dir);
  for (const bool stop : {true, false}) {
    CAPTURE(stop);
    Merger merger(plan.get(), 4);
    merger.SetRunThreshold(1, 1);  // runs: the walk that streams in order
    for (uint32_t s = 0; s < 4; ++s) REQUIRE(merger.Add(s, DisjointPartial(*plan, s, 10000)).ok());
    ResultStreamTargets t;
    t.platform = &Platform::Posix();
    t.run_dir_file = dir + "/result.csv";
    t.spill_dir = dir + "/merge";
    t.shown = false;
    std::atomic<int> polls{0};
    t.should_stop = [&] {
      ++polls;
      return stop;
    };
    Result<ResultStreamOutcome> out = WriteResultStream(merger, *plan, 0, t);
    if (stop) {
      REQUIRE_FALSE(out.ok());
      CHECK(out.status().code() == Status::Code::kInterrupted);
      CHECK_FALSE(std::filesystem::exists(t.run_dir_file));
    } else {
      REQUIRE(out.ok());
      CHECK(out->streamed);
      CHECK(out->rows_written == 0);
      CHECK(polls.load() >= 40000 / 4096);  // polled as the walk goes
    }
  }
  std::filesystem::remove_all(dir);
}

}  // namespace
}  // namespace fanfold
