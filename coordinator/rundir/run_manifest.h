// RunManifest: run.json, the definition of one run, written once when the
// run starts: the job file, record format, plan fingerprint and canonical
// plan text, and the shard list with each shard's identity (path, size,
// mtime, byte range). `resume` trusts it, not a new expansion of the job's
// patterns, so a resumed run finishes exactly the run that was started.
// Layout: docs/run-directory.md. Plain data.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "common/job/shard_list.h"
#include "common/base/status.h"

namespace fanfold {

inline constexpr int kRunDirectoryVersion = 1;

// A run of one part of a job (`run --part I/N`): which part, and the full
// shard list it was cut from, so `merge` can check that the parts cover it.
struct PartOfRun {
  uint32_t number = 0;        // I, 1-based; 0 = the run is not a part (the whole job)
  uint32_t count = 0;         // N
  uint32_t first_shard = 0;   // the full list's index of the part's shard 0
  uint32_t total_shards = 0;  // shards in the full list
  std::string list_digest;    // ShardListDigest of the full list (16 hex digits)
};

struct RunManifest {
  int version = kRunDirectoryVersion;
  std::string job_path;        // absolute
  std::string format;          // "ndjson" | "csv" | "tsv"
  std::string fingerprint;     // 16 hex digits
  std::string plan_text;       // PlanCanonicalText
  std::string created_utc;     // ISO 8601
  uint32_t attempts = 3;              // --attempts of `run`: what `resume` uses unless told
  uint64_t shard_time_limit_ms = 0;   // --shard-time-limit of `run` (0 = none), likewise
  ShardList shards;
  // Each shard's slot: the key of its partial in the packs (see
  // run_directory.h). Slots outlive shard indices: `refresh` re-sorts the
  // shard list, so a shard's index moves, but a reused shard keeps its slot
  // and a new or changed one gets a slot never used before. Empty = slot i
  // for shard i (run directories written before `refresh` existed).
  std::vector<uint32_t> slots;
  uint32_t generation = 1;  // 1 for `run`; each `refresh` adds one
  // A part run: its shards are the full list's first_shard, first_shard+1,
  // ..., indexed here from 0 (the run's own result is theirs alone).
  PartOfRun part;

  // The slot of shard i. REQUIRES: i < shards.shards.size().
  uint32_t SlotOf(size_t i) const { return slots.empty() ? static_cast<uint32_t>(i) : slots[i]; }
  // One slot per shard (slots filled in if empty).
  std::vector<uint32_t> AllSlots() const;
};

std::string EncodeManifest(const RunManifest& m);
// `where` names the file in error messages.
Result<RunManifest> DecodeManifest(const std::string& text, const std::string& where);

}  // namespace fanfold
