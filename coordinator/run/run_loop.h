// RunLoop: the coordinator's dispatch loop — hands shards to workers in
// dispatch order (a few small ones queued per worker), collects what comes
// back, retries shards whose worker died (on a fresh worker, up to
// max_attempts; shards queued behind the one that died go back to the queue
// without counting an attempt), kills and retries a worker that exceeds the
// per-shard time limit, and quarantines a shard that fails every attempt. A shard whose worker reports an error (bad data) fails at once:
// the same input would fail again. A partial that arrives corrupt (checksum)
// is retried like a crash. Every attempt is reported through
// on_attempt; every partial goes through on_partial (which persists it)
// before the Merger sees it. Single-threaded.
#pragma once

#include <cstdint>
#include <functional>
#include <string>
#include <vector>

#include "common/partial/partial_codec.h"
#include "common/job/shard_list.h"
#include "common/base/status.h"
#include "coordinator/run/merger.h"
#include "common/transport/transport.h"
#include "coordinator/rundir/run_journal.h"

namespace fanfold {

struct ShardFailure {
  uint32_t shard = 0;
  std::string path;
  std::string message;
  uint32_t attempts = 0;
};

struct RunLoopResult {
  std::vector<ShardFailure> failures;  // sorted by shard index
  bool interrupted = false;            // stopped by should_stop before the end
  uint64_t retries = 0;
};

struct RunLoopOptions {
  uint32_t max_attempts = 3;            // first try + 2 retries
  uint64_t shard_time_limit_ms = 0;     // 0 = none (counted from the worker's start of the shard)
  // Shards a worker may hold at once (running + queued behind it), so it
  // starts the next without a round trip to the coordinator; capped by the
  // transport's room(). Past the first, a worker only takes more while the
  // bytes it holds stay within queue_bytes, so big shards are still handed
  // out one at a time, largest first, to whichever worker is free.
  uint32_t queue_depth = 4;
  uint64_t queue_bytes = 1u << 20;
  // Each worker's group-table budget, sent with every task (0 = the
  // worker's default; ShardTask::table_bytes).
  uint64_t worker_table_bytes = 0;
  std::function<bool()> should_stop;    // polled between events; may be empty
  std::function<void(const AttemptRecord&)> on_attempt;
  // Persists a finished shard's partial; an error stops the run.
  std::function<Status(uint32_t shard, const std::string& partial)> on_partial;
  // Called between events (e.g. to commit the run directory); an error stops the run.
  std::function<Status()> on_idle;
};

// Runs the shards listed in `order` (indices into list.shards) through
// transport into merger. Returns an error only for a failure of the run
// itself (transport or storage); shard failures are in result->failures.
Status RunShards(const ShardList& list, const std::vector<uint32_t>& order, Transport& transport, Merger& merger,
                 const RunLoopOptions& options, RunLoopResult* result);

}  // namespace fanfold
