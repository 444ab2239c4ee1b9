// ShardScheduler: decides the order shards are handed out — largest first
// (longest-processing-time-first), ties by shard index — so one big shard
// does not finish last alone. Shards under kSmallShardBytes come after the
// big ones in index order: each takes milliseconds, so their order hardly
// moves the end of the run, and in index order their partials reach the
// merge about when it can fold them (sorted by size, thousands of tiny
// shards arrive in random index order: the merge then holds them, reads
// most back from the run directory, and folds them all at the end while the
// workers wait). With one worker there is nothing to balance:
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

// Below this many bytes (ShardList's Shard::bytes()) a shard is dispatched
// in index order after the larger ones.
inline constexpr uint64_t kSmallShardBytes = uint64_t{1} << 20;

// Returns shard indices in dispatch order for `workers` workers (the
// transport's count). Fails only on a malformed test switch.
Result<std::vector<uint32_t>> DispatchOrder(const std::vector<Shard>& shards, int workers);

}  // namespace fanfold
