// RunLoop: the coordinator's dispatch loop — hands shards to idle workers in
// dispatch order, collects what comes back, and feeds partials to the
// Merger (which folds them in shard order). A shard whose worker reports an
// error or dies is recorded as failed and the run goes on. Polls a stop
// flag (set by the signal guard) between events. Single-threaded.
#pragma once

#include <atomic>
#include <cstdint>
#include <functional>
#include <string>
#include <vector>

#include "common/shard_list.h"
#include "common/status.h"
#include "coordinator/merger.h"
#include "coordinator/transport.h"

namespace fanfold {

struct ShardFailure {
  uint32_t shard = 0;
  std::string path;
  std::string message;
};

struct RunLoopResult {
  std::vector<ShardFailure> failures;  // sorted by shard index
  bool interrupted = false;            // stopped by *stop before the end
};

struct RunLoopOptions {
  const std::atomic<bool>* stop = nullptr;  // may be null
  // Called after each shard finishes (done or failed), e.g. for progress.
  std::function<void(const Shard&, bool ok)> on_shard_finished;
};

// Runs every shard in `order` through transport into merger.
Status RunShards(const ShardList& list, const std::vector<uint32_t>& order, Transport& transport, Merger& merger,
                 const RunLoopOptions& options, RunLoopResult* result);

}  // namespace fanfold
