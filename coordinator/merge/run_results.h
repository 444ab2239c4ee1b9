// RunResults: every reduction's result held as a key-sorted run (a
// group-table encoding, docs/streaming-merge.md) instead of a GroupTable,
// once the tables grow past a threshold. Partials join a pending batch in
// shard order; Fold() folds the batch into every run with GroupFold over
// key ranges, keeping each key's left fold in shard order, so the runs
// are byte for byte what the in-memory tables would encode. A partial the
// fold finds bad is dropped and the batch folded again without it; the
// runs only change when a whole batch folded. A batch's partials are read
// as streams from their stored bytes (coordinator/merge/partial_stream.h),
// so a batch is bounded by open streams, not by its partials' sizes. The
// runs stay in memory while
// they fit the merge's memory share; past it (with a spill folder) every
// fold writes them to files there (MergeMemory below). Owned by the
// coordinator's Merger; not thread-safe (Fold uses its own threads inside).
#pragma once

#include <cstdint>
#include <functional>
#include <memory>
#include <string>
#include <utility>
#include <vector>

#include "common/base/status.h"
#include "common/job/plan.h"
#include "common/partial/group_table.h"
#include "common/partial/partial_codec.h"
#include "coordinator/merge/group_fold.h"
#include "coordinator/merge/partial_stream.h"
#include "coordinator/merge/run_cursor.h"
#include "coordinator/merge/spill_folder.h"
#include "coordinator/merge/stored_run.h"

namespace fanfold {

// What the runs may hold in memory. A fold holds the old runs, the new
// runs and one stream per partial of the pending batch and key range
// (coordinator/merge/partial_stream.h: zstd's window for the partial's
// frame and small buffers, not the decompressed partial), so the new runs
// are written to spill files once twice the old runs' bytes plus the
// batch's decompressed bytes and its streams would pass merge_bytes (and
// from then on: runs only grow). A batch is folded once its streams (over
// every key range) take half of merge_bytes, or it has kMaxBatchPartials
// partials (the open files and streams a fold may hold), or the stored
// bytes it keeps in memory (without an opener) reach a quarter of
// merge_bytes or kMaxBatchBytes; at least one partial. Without a spill
// folder the runs stay in memory.
struct MergeMemory {
  static constexpr uint64_t kDefaultMergeBytes = uint64_t{256} << 20;
  uint64_t merge_bytes = kDefaultMergeBytes;
  SpillFolder* spill = nullptr;  // REQUIRES: outlives the RunResults
};

// Opens a shard's stored partial again (a pack of the run directory), for
// the scan when it joins a batch and for the fold. Without one, a batch
// keeps its partials' stored bytes in memory.
using PartialOpener = std::function<Result<std::unique_ptr<StoredPartialBytes>>(uint32_t shard)>;

class RunResults {
 public:
  // REQUIRES: plan outlives this; threads >= 1 (key ranges per fold).
  RunResults(const Plan* plan, size_t threads, MergeMemory memory = {});

  // Starts reduction r's run from its in-memory table (its Encode).
  void Start(size_t r, const GroupTable& table);
  // The same from the table's encoding (`groups` groups).
  void Start(size_t r, std::string encoded, uint64_t groups);

  // Where partials are read from at fold time (see PartialOpener).
  void SetOpener(PartialOpener open) { open_ = std::move(open); }
  // Adds a shard's partial (shards in ascending order) to the pending
  // batch: `bytes` are its stored bytes (header, compressed body), scanned
  // now (ScanStoredPartial: the checksum unless checksum_checked, the
  // totals' counts, each reduction's group count); with an opener they
  // are let go and opened again to fold. Fails iff the scan does (the
  // partial is then not added: the caller drops its shard).
  Status Add(uint32_t shard, std::unique_ptr<StoredPartialBytes> bytes, bool checksum_checked);
  bool pending() const { return !batch_.empty(); }
  // True iff the pending batch is big enough to fold: its groups are
  // twice the runs' (rewriting the runs then costs at most about half of
  // folding the batch), or it reached a limit of MergeMemory's comment.
  bool BatchFull() const;
  static constexpr uint64_t kMaxBatchBytes = uint64_t{64} << 20;
  static constexpr size_t kMaxBatchPartials = 64;

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

  // The pending batch's partials (shard and header counts), in shard order:
  // what the totals will count once they fold.
  std::vector<std::pair<uint32_t, const OpenedPartial*>> PendingPartials() const;

  // The last fold straight into the output (docs/streaming-merge.md): the
  // pending batch folded with reduction r's run over key ranges, each
  // group handed to a visitor instead of written to a new run. Prepare
  // opens the batch's partials and cuts the ranges (0 ranges: a partial
  // could not be opened; fold the usual way); FoldStraight(i, visit) folds
  // range i on the calling thread (ranges may run at once, one thread
  // each); Consumed() empties the batch once every range folded (the run
  // is then not the result any more: nothing may walk it again). A failed
  // range changes nothing: Fold() then folds the batch the usual way.
  // REQUIRES: one reduction in the plan; pending().
  size_t PrepareStraight(size_t r);
  FoldOutcome FoldStraight(size_t i, const GroupFold::Visit& visit, bool* visit_failed) const;
  void Consumed();

  // Walks reduction r's run: its groups in ascending key order, each key's
  // states as the in-memory table would encode them. Valid while this
  // RunResults lives and no Fold runs.
  RunCursor Cursor(size_t r) const { return RunCursor(runs_[r]->pieces(), plan_->reductions[r].configs.size()); }
  // Reduction r's run as its pieces (key ranges, in key order).
  std::vector<RunPiece> Pieces(size_t r) const { return runs_[r]->pieces(); }
  uint64_t run_groups() const { return run_groups_; }
  // The runs' bytes, over every reduction, and whether they are in files.
  uint64_t run_bytes() const;
  bool spilled() const { return !runs_.empty() && runs_[0] && runs_[0]->spilled(); }
  uint64_t folds() const { return folds_; }

 private:
  // True iff the next fold writes its runs to spill files.
  bool ShouldSpill() const;
  // Folds reduction r's run with the batch into *next (in memory or, with
  // spill, in files named after `end`, the batch's last shard + 1).
  FoldOutcome FoldOne(size_t r, bool spill, uint32_t end, const std::vector<const StoredPartialBytes*>& bytes,
                      std::unique_ptr<StoredRun>* next);

  const Plan* plan_;
  size_t threads_;
  MergeMemory memory_;
  uint64_t folds_ = 0;
  std::vector<std::unique_ptr<StoredRun>> runs_;  // per reduction
  uint64_t run_groups_ = 0;        // over every reduction
  struct Pending {
    uint32_t shard = 0;
    std::unique_ptr<OpenedPartial> info;       // header and counts, no body
    std::unique_ptr<StoredPartialBytes> held;  // the stored bytes, without an opener
    ScannedPartial scanned;
  };

  struct Straight {  // PrepareStraight's
    size_t reduction = 0;
    std::vector<std::unique_ptr<StoredPartialBytes>> opened;
    FoldInputs in;
    std::vector<KeyRange> ranges;
  };
  std::unique_ptr<Straight> straight_;

  const std::vector<size_t> measure_counts_;
  PartialOpener open_;
  std::vector<Pending> batch_;
  uint64_t batch_groups_ = 0;
  uint64_t batch_held_ = 0;     // stored bytes held in memory
  uint64_t batch_streams_ = 0;  // one stream of each partial
  uint64_t batch_raw_ = 0;      // decompressed bodies
};

}  // namespace fanfold
