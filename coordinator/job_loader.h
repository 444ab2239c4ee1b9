// LoadJob: the steps every command starts with — read and validate the job
// file, expand its shard list, compile the plan for the shards' format.
// Errors carry the job file and JSON Pointer (usage errors, exit status 2).
#pragma once

#include <memory>
#include <string>

#include "common/plan.h"
#include "common/shard_list.h"
#include "common/status.h"

namespace fanfold {

struct LoadedJob {
  std::unique_ptr<Plan> plan;
  ShardList shards;
};

Result<LoadedJob> LoadJob(const std::string& job_path);

}  // namespace fanfold
