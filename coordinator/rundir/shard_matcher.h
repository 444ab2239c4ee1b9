// MatchShards: how `refresh` carries a run over to a new expansion of the
// job's patterns. A shard of the new list whose identity (path, byte range,
// file size, mtime) equals a shard of the run's list keeps that shard's slot
// (its committed partial may be reused); every other new shard gets a fresh
// slot above `first_free_slot` and is computed. Shards of the run's list that
// nothing kept are dropped (their file is gone) or replaced (their file is
// still there but changed: grown, rewritten, touched, or cut into other
// chunks). Pure function; thread-safe.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "coordinator/rundir/run_manifest.h"

namespace fanfold {

struct ShardMatch {
  std::vector<uint32_t> slots;       // per new shard: its slot
  std::vector<bool> kept;            // per new shard: true iff it matched a shard of the run
  std::vector<uint32_t> dropped;     // indices in the run's list whose file is not in the new list
  std::vector<uint32_t> replaced;    // indices in the run's list whose file changed
  std::vector<std::string> dropped_paths;   // their files, each once, sorted
  std::vector<std::string> computed_paths;  // files of the new shards not kept, each once, sorted
};

// REQUIRES: first_free_slot is above every slot with a partial in the run
// directory and every slot of `before`.
ShardMatch MatchShards(const RunManifest& before, const ShardList& now, uint32_t first_free_slot);

}  // namespace fanfold
