// ExecuteRun: the part of `run` and `resume` after the run directory is
// ready — merge the shards that already have committed partials, fan the
// pending ones out to workers (retrying and quarantining as needed),
// persist every partial and journal every attempt, then write the result,
// result copy and summary.json. SIGINT/SIGTERM stop it gracefully: no new
// shards, the journal committed, a hint on how to resume.
#pragma once

#include <cstdint>
#include <vector>

#include "common/job/plan.h"
#include "common/job/shard_list.h"
#include "coordinator/cli/run_command.h"
#include "coordinator/rundir/run_directory.h"

namespace fanfold {

struct RunInput {
  const Plan* plan = nullptr;
  const ShardList* shards = nullptr;
  RunDirectory* dir = nullptr;
  std::vector<uint32_t> pending;  // shards to process
  std::vector<uint32_t> reused;   // shards whose committed partial is merged as it is
  const char* mode = "run";       // "run" or "resume", for the journal
};

CommandOutcome ExecuteRun(const RunInput& input, const RunOptions& options);

}  // namespace fanfold
