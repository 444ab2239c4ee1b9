// LoadJob: the steps every command starts with — read and validate the job
// file, expand its shard list, compile the plan for the shards' format.
// Errors carry the job file and JSON Pointer (usage errors, exit status 2).
#pragma once

#include <memory>
#include <string>
#include <string_view>

#include "common/job/plan.h"
#include "common/job/shard_list.h"
#include "common/base/status.h"

namespace fanfold {

struct LoadedJob {
  std::unique_ptr<Plan> plan;
  ShardList shards;
};

Result<LoadedJob> LoadJob(const std::string& job_path);

}  // namespace fanfold

namespace fanfold {

// The worker's view: compiles the job file's plan for `format` ("ndjson",
// "csv", "tsv") and checks it against the coordinator's fingerprint (hex),
// so a job file edited after the run started is refused, not half-applied.
// base_dir, when not empty, is the directory the job's relative paths
// (lookup tables) start from instead of the job file's own (a run's copy of
// the job lives in the run directory). expected_plan_text, when given, is
// the run's canonical plan text: a refusal then names the lookup tables
// whose file changed.
Result<std::unique_ptr<Plan>> LoadWorkerPlan(const std::string& job_path, const std::string& format,
                                             const std::string& fingerprint_hex, const std::string& base_dir = "",
                                             std::string_view expected_plan_text = {});

// The fingerprint as 16 lowercase hex digits.
std::string FingerprintHex(uint64_t fingerprint);

}  // namespace fanfold
