// RunSummary: the human-readable lines a run leaves on stderr — malformed
// record samples, failed shards, and the one-line totals (shards, records,
// bytes, wall time, MB/s). Formatting only; the caller decides when to print.
#pragma once

#include <string>
#include <vector>

#include "common/job/shard_list.h"
#include "coordinator/run/merger.h"
#include "coordinator/run/run_loop.h"

namespace fanfold {

// What this session's workers did: the shards they finished, their records
// and bytes. Rates are computed over these alone; a resumed run's reused
// shards cost no reading, so counting them would inflate MB/s.
struct ProcessedTotals {
  uint64_t shards = 0;
  uint64_t records = 0;  // read, malformed included
  uint64_t compressed_bytes = 0;
  uint64_t raw_bytes = 0;
};

struct RunSummary {
  size_t shards_total = 0;
  MergeTotals totals;
  std::vector<MalformedReport> samples;
  std::vector<ShardFailure> failures;
  double wall_seconds = 0;
  bool interrupted = false;
  // Interrupted runs: shards whose partial is committed in the run directory
  // (what `resume` keeps). Shards finish out of order and are merged in
  // order, so this is usually more than totals.shards_merged.
  size_t shards_saved = 0;
  size_t shards_reused = 0;   // merged from the run directory as they were
  ProcessedTotals processed;  // done in this session (MB/s is over these)
  // Peak resident memory in bytes, as the kernel counts it (getrusage): of
  // the coordinator, and of the largest worker process this session ended
  // (0 when none did: --in-process, or nothing to process).
  uint64_t peak_rss = 0;
  uint64_t peak_worker_rss = 0;
  // The memory cap (coordinator/run/memory_budget.h): bytes, where it came
  // from; how the merge held the results ("tables", "runs in memory" or
  // "spilled runs") and the bytes it wrote to spill files.
  uint64_t memory_cap = 0;
  std::string memory_cap_from;
  std::string merge_held = "tables";
  uint64_t merge_spilled_bytes = 0;
};

// "1,234,567"
std::string GroupedInteger(uint64_t n);
// "12.3 MB" (decimal megabytes, as disks and networks are sold)
std::string Megabytes(uint64_t bytes);

// The lines to print, each without a trailing newline. With reused shards
// the count says how many were reused and how many processed, and the rate
// is over the processed shards only.
std::vector<std::string> FormatRunSummary(const RunSummary& s, const ShardList& list);

}  // namespace fanfold
