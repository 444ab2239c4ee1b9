// RunResults: every reduction's result held as a key-sorted run (a
// group-table encoding, docs/streaming-merge.md) instead of a GroupTable,
// once the tables grow past a threshold. Partials join a pending batch in
// shard order; Fold() folds the batch into every run with GroupFold over
// key ranges, keeping each key's left fold in shard order, so the runs
// are byte for byte what the in-memory tables would encode. A partial the
// fold finds bad is dropped and the batch folded again without it; the
// runs only change when a whole batch folded. Owned by the coordinator's
// Merger; not thread-safe (Fold uses its own threads inside).
#pragma once

#include <cstdint>
#include <memory>
#include <string>
#include <utility>
#include <vector>

#include "common/base/status.h"
#include "common/job/plan.h"
#include "common/partial/group_table.h"
#include "common/partial/partial_codec.h"

namespace fanfold {

class RunResults {
 public:
  // REQUIRES: plan outlives this; threads >= 1 (key ranges per fold).
  RunResults(const Plan* plan, size_t threads);

  // Starts reduction r's run from its in-memory table (its Encode).
  void Start(size_t r, const GroupTable& table);
  // The same from the table's encoding (`groups` groups).
  void Start(size_t r, std::string encoded, uint64_t groups);

  // Adds a shard's partial (REQUIRES: one group table per reduction,
  // shards in ascending order) to the pending batch.
  void Add(uint32_t shard, std::unique_ptr<OpenedPartial> p);
  bool pending() const { return !batch_.empty(); }
  // True iff the pending batch is big enough to fold: its groups are
  // twice the runs' (rewriting the runs then costs at most about half of
  // folding the batch), or its partials' bodies hold kMaxBatchBytes (the
  // memory a batch may take).
  bool BatchFull() const;
  static constexpr uint64_t kMaxBatchBytes = uint64_t{64} << 20;

  struct Folded {
    // The batch's partials that folded, in shard order (for the totals).
    std::vector<std::pair<uint32_t, std::unique_ptr<OpenedPartial>>> merged;
    // The ones dropped: shard and what was wrong.
    std::vector<std::pair<uint32_t, std::string>> bad;
    // Set iff the runs could not be folded at all (a bounded measure past
    // its limit, or a run's own bytes bad); the runs are then as before.
    Status fatal;
  };
  // Folds the pending batch into the runs and empties it.
  Folded Fold();

  // Reduction r's run (a group-table encoding).
  const std::string& run(size_t r) const { return runs_[r]; }
  uint64_t run_groups() const { return run_groups_; }

 private:
  const Plan* plan_;
  size_t threads_;
  std::vector<std::string> runs_;  // per reduction
  uint64_t run_groups_ = 0;        // over every reduction
  std::vector<std::pair<uint32_t, std::unique_ptr<OpenedPartial>>> batch_;
  uint64_t batch_groups_ = 0;
  uint64_t batch_bytes_ = 0;
};

}  // namespace fanfold
