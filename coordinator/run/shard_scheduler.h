// ShardScheduler: decides the order shards are handed out — largest first
// (longest-processing-time-first), ties by shard index — so one big shard
// does not finish last alone. With one worker there is nothing to balance:
// shards go in index order, so each partial arrives when the merge (which
// folds in shard order) can take it, instead of waiting and being read
// back from the run directory. A test-only switch reorders dispatch to prove
// that results do not depend on it: the environment variable
// FANFOLD_TEST_ONLY_DISPATCH=reverse | shuffle:SEED (never set by users; its
// name says so). Order only affects timing, never results. Plain data.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "common/job/shard_list.h"
#include "common/base/status.h"

namespace fanfold {

// Returns shard indices in dispatch order for `workers` workers (the
// transport's count). Fails only on a malformed test switch.
Result<std::vector<uint32_t>> DispatchOrder(const std::vector<Shard>& shards, int workers);

}  // namespace fanfold
