// LoadJob / LoadWorkerPlan / FingerprintHex: a job file read, its shards
// listed and its plan compiled; expression errors before input errors; the
// worker's refusal of a job file changed since the run started.
#include "common/job/job_loader.h"

#include <doctest/doctest.h>
#include <stdlib.h>

#include <filesystem>
#include <fstream>
#include <string>

#include "tests/port/scratch_dir_test_util.h"

namespace fanfold {
namespace {

struct JobDir : ScratchFiles {
  JobDir() : ScratchFiles("fanfold-job") {}
};

constexpr const char* kJob =
    R"({"inputs": {"files": ["*.ndjson"]}, "group": ["{/k}"], "measures": [{"name": "n", "fn": "count"}]})";

// Intent: 16 lowercase hex digits, zero-padded (Python: format(x, '016x')).
TEST_CASE("job_loader: FingerprintHex") {
  CHECK(FingerprintHex(0x1234) == "0000000000001234");
  CHECK(FingerprintHex(0xDEADBEEFCAFEF00Dull) == "deadbeefcafef00d");
  CHECK(FingerprintHex(0) == "0000000000000000");
}

// Intent: a job with two matching files gives both shards and a plan for NDJSON.
TEST_CASE("job_loader: a job loads with its shards and plan") {
  JobDir dir;
  const std::string job = dir.Write("job.json", kJob);
  dir.Write("b.ndjson", "{\"k\": 1}\n");
  dir.Write("a.ndjson", "{\"k\": 2}\n{\"k\": 3}\n");
  Result<LoadedJob> loaded = LoadJob(job);
  REQUIRE(loaded.ok());
  REQUIRE(loaded->plan != nullptr);
  CHECK(loaded->plan->format == RecordFormat::kNdjson);
  CHECK(loaded->shards.shards.size() == 2);
}

// Intent: a broken expression is reported even when the inputs are missing
// too: the job's own mistakes come first.
TEST_CASE("job_loader: expression errors before input errors") {
  JobDir dir;
  const std::string job = dir.Write("job.json", R"({"inputs": {"files": ["none-*.ndjson"]}, "group": ["{/k"],
    "measures": [{"name": "n", "fn": "count"}]})");
  Result<LoadedJob> loaded = LoadJob(job);
  REQUIRE_FALSE(loaded.ok());
  CHECK(loaded.status().message().find("/group/0") != std::string::npos);
}

// Intent: with a sound job, missing inputs are the error, naming the entry.
TEST_CASE("job_loader: missing inputs are reported") {
  JobDir dir;
  const std::string job = dir.Write("job.json", kJob);
  Result<LoadedJob> loaded = LoadJob(job);
  REQUIRE_FALSE(loaded.ok());
  CHECK(loaded.status().message().find("/inputs/files/0") != std::string::npos);
}

// Intent: the worker accepts the job only under the coordinator's
// fingerprint and a known format, and says what differs otherwise.
TEST_CASE("job_loader: LoadWorkerPlan checks the fingerprint") {
  JobDir dir;
  const std::string job = dir.Write("job.json", kJob);
  dir.Write("a.ndjson", "{\"k\": 1}\n");
  Result<LoadedJob> loaded = LoadJob(job);
  REQUIRE(loaded.ok());
  const std::string hex = FingerprintHex(loaded->plan->fingerprint);
  Result<std::unique_ptr<Plan>> same = LoadWorkerPlan(job, "ndjson", hex);
  REQUIRE(same.ok());
  CHECK((*same)->fingerprint == loaded->plan->fingerprint);

  Result<std::unique_ptr<Plan>> stale = LoadWorkerPlan(job, "ndjson", "0000000000000000");
  REQUIRE_FALSE(stale.ok());
  CHECK(stale.status().message() == "job file '" + job + "' changed since the run started (plan " + hex +
                                        ", expected 0000000000000000)");
  Result<std::unique_ptr<Plan>> bad_format = LoadWorkerPlan(job, "parquet", hex);
  REQUIRE_FALSE(bad_format.ok());
  CHECK(bad_format.status().message() == "unknown record format 'parquet'");
}

}  // namespace
}  // namespace fanfold
