// LoadJob: the steps every command starts with — read and validate the job
// file, expand its shard list, compile the plan for the shards' format.
// Errors carry the job file and JSON Pointer (usage errors, exit status 2).
#pragma once

#include <memory>
#include <string>

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
Result<std::unique_ptr<Plan>> LoadWorkerPlan(const std::string& job_path, const std::string& format,
                                             const std::string& fingerprint_hex);

// The fingerprint as 16 lowercase hex digits.
std::string FingerprintHex(uint64_t fingerprint);

}  // namespace fanfold
