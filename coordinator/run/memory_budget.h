// MemoryBudget: the one byte count that bounds the coordinator's memory
// (the CLI's --memory-cap on run, resume, refresh and merge; else the job
// file's "memory_cap"; else a quarter of the memory the machine says is
// available, at most 128 MiB), checked against what the job needs to make progress, and its
// split into the shares the run's parts take (docs/streaming-merge.md):
//   merge_bytes         half: the merge's tables, in-memory runs and batch
//                       (coordinator/run/merger.h, coordinator/merge/run_results.h)
//   sort_bytes          a quarter: the output stage's rows (ordering, limit)
//   worker_table_bytes  a quarter: each worker's group table before it spills
// Results never depend on it (not in the plan's fingerprint). Pure
// functions but for DefaultMemoryCap, which reads the machine; thread-safe.
#pragma once

#include <cstdint>
#include <string>

#include "common/base/status.h"
#include "common/job/plan.h"

namespace fanfold {

struct MemoryShares {
  uint64_t cap = 0;                  // the whole budget, bytes
  uint64_t merge_bytes = 0;          // cap / 2
  uint64_t sort_bytes = 0;           // cap / 4
  uint64_t worker_table_bytes = 0;   // cap / 4
  std::string source;                // "--memory-cap", "the job's \"memory_cap\"" or "the default ..."
};

// The shares of cap.
MemoryShares SplitMemoryCap(uint64_t cap);

// A quarter of the machine's available memory (Linux MemAvailable; 1 GiB
// when the system does not say), at most kDefaultCapCeiling. Past the
// ceiling more memory did not make the merge faster once its batches read
// partials as streams (bench/cardinality-bench, docs/streaming-merge.md:
// 6.3 M groups, 40 shards, 11.54 CPU s under 128 MiB against 11.36 under
// 5.5 GiB), and under it the coordinator stays flat as groups grow (83 MiB
// peak RSS for 1.46 M groups, 86 MiB for 6.3 M).
inline constexpr uint64_t kFallbackCap = uint64_t{1} << 30;
inline constexpr uint64_t kDefaultCapCeiling = uint64_t{128} << 20;
uint64_t DefaultMemoryCap();

// What the merge needs to make progress at all, with `threads` key ranges
// per fold: per range a write buffer (twice the fold's drain size, as a
// string may double) and the window of a spilled run walked before its
// pages are handed back; per measure of every reduction two states (the
// key being folded, and MergeEncoded's scratch) of up to kStateAllowance.
// Partials themselves are not counted: a batch always takes at least one.
inline constexpr uint64_t kStateAllowance = uint64_t{64} << 10;
uint64_t MinimumMergeBytes(const Plan& plan, size_t threads);
// The smallest cap whose merge share holds MinimumMergeBytes.
uint64_t MinimumMemoryCap(const Plan& plan, size_t threads);

// The run's budget: flag_cap (> 0: given on the command line), else the
// plan's job "memory_cap", else DefaultMemoryCap() (raised to the minimum
// if the machine is that short). A given cap below MinimumMemoryCap is an
// InvalidArgument naming the flag or the job file's JSON location, what
// was found and the least that works.
Result<MemoryShares> ResolveMemoryCap(uint64_t flag_cap, const Plan& plan, size_t threads = 1);

}  // namespace fanfold
