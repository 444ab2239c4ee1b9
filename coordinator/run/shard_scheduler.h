// ShardScheduler: decides the order shards are handed out — largest first
// (longest-processing-time-first), ties by shard index — so one big shard
// does not finish last alone. A test-only switch reorders dispatch to prove
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

// Returns shard indices in dispatch order. Fails only on a malformed test
// switch.
Result<std::vector<uint32_t>> DispatchOrder(const std::vector<Shard>& shards);

}  // namespace fanfold
