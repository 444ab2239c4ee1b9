#include "coordinator/run/memory_budget.h"

#include <algorithm>

#include "common/base/byte_size.h"
#include "common/port/process_control.h"
#include "coordinator/merge/group_fold.h"
#include "coordinator/merge/run_cursor.h"

namespace fanfold {

MemoryShares SplitMemoryCap(uint64_t cap) {
  MemoryShares s;
  s.cap = cap;
  s.merge_bytes = cap / 2;
  s.sort_bytes = cap / 4;
  s.worker_table_bytes = cap / 4;
  return s;
}

uint64_t DefaultMemoryCap() {
  const uint64_t available = AvailableMemoryBytes();
  return std::min(available == 0 ? kFallbackCap : available / 4, kDefaultCapCeiling);
}

uint64_t MinimumMergeBytes(const Plan& plan, size_t threads) {
  uint64_t states = 0;
  for (const ReductionPlan& r : plan.reductions) states += r.configs.size();
  const uint64_t per_range = 2 * GroupFold::kDrainBytes + RunCursor::kReleaseStep;
  return std::max<size_t>(threads, 1) * per_range + states * 2 * kStateAllowance;
}

uint64_t MinimumMemoryCap(const Plan& plan, size_t threads) { return 2 * MinimumMergeBytes(plan, threads); }

Result<MemoryShares> ResolveMemoryCap(uint64_t flag_cap, const Plan& plan, size_t threads) {
  const uint64_t least = MinimumMemoryCap(plan, threads);
  const auto too_small = [&](const std::string& where, uint64_t cap) {
    return Status::InvalidArgument(
        where + ": found " + std::to_string(cap) + " bytes (" + ByteSizeText(cap) +
        "), too small for this job: the merge needs " + ByteSizeText(MinimumMergeBytes(plan, threads)) +
        " (buffers to write and read its runs, two states per measure) and gets half the cap; expected at least " +
        std::to_string(least) + " bytes (" + ByteSizeText(least) + ")");
  };
  if (flag_cap > 0) {
    if (flag_cap < least) return too_small("--memory-cap", flag_cap);
    MemoryShares s = SplitMemoryCap(flag_cap);
    s.source = "--memory-cap";
    return s;
  }
  if (plan.spec.memory_cap) {
    if (*plan.spec.memory_cap < least) return too_small(plan.spec.job_path + ": /memory_cap", *plan.spec.memory_cap);
    MemoryShares s = SplitMemoryCap(*plan.spec.memory_cap);
    s.source = "the job's \"memory_cap\"";
    return s;
  }
  MemoryShares s = SplitMemoryCap(std::max(DefaultMemoryCap(), least));
  s.source = "the default (a quarter of the available memory, at most 128 MiB)";
  return s;
}

}  // namespace fanfold
