// Merger: folds shard partial states into the run's result strictly in
// shard-index order, whatever order they arrive in, so floating-point
// results are identical for any worker count or schedule. Partials that
// arrive early wait (as bytes) until every lower shard is merged or marked
// failed. The result is an in-memory GroupTable per reduction while the
// tables fit half the merge's memory share (SetMemory), then key-sorted
// runs folded in batches, in spill files past the share
// (docs/streaming-merge.md): the same bytes either way. Owned and driven
// by the coordinator's run loop; not thread-safe.
#pragma once

#include <algorithm>
#include <cstdint>
#include <functional>
#include <map>
#include <memory>
#include <string>
#include <thread>
#include <vector>

#include "coordinator/merge/range_tables.h"
#include "coordinator/merge/run_results.h"
#include "coordinator/output/output_table.h"
#include "common/partial/partial_codec.h"
#include "common/job/plan.h"
#include "common/base/status.h"

namespace fanfold {

struct MergeTotals {
  uint64_t shards_merged = 0;
  uint64_t records = 0;    // read, malformed included
  uint64_t kept = 0;       // past the job's filter
  std::vector<uint64_t> kept_by_reduction;  // past the job's filter and each reduction's own
  uint64_t malformed = 0;
  uint64_t raw_bytes = 0;
  uint64_t compressed_bytes = 0;
  // Per raw field of the plan (FieldTable order, derived fields skipped):
  // the merged records in which it had a value. Known iff every merged
  // partial carried one count per raw field (partials made by hand in
  // tests and benchmarks may carry none); the run's end warns about a
  // field no record had only when they are known.
  std::vector<uint64_t> field_present;
  bool field_counts_known = true;
  // Per lookup table of the plan (job-file order): the merged records whose
  // match value found no row; known iff every merged partial carried one
  // count per table.
  std::vector<uint64_t> lookup_unmatched;
  bool lookup_counts_known = true;
};

// A malformed record seen in some shard, for the run summary.
struct MalformedReport {
  uint32_t shard = 0;
  MalformedSample sample;
};

class Merger {
 public:
  // Early partials kept in memory, at most (see SetReloader).
  static constexpr uint64_t kDefaultWaitingBudget = uint64_t{2} << 20;  // 2 MiB

  // REQUIRES: plan outlives the merger; shard_count = number of shards.
  Merger(const Plan* plan, uint32_t shard_count, uint64_t waiting_budget = kDefaultWaitingBudget);

  // Accepts shard's encoded partial. Fails if its header or checksum is bad
  // or it is from another plan; the caller then treats the shard as failed
  // (MarkFailed).
  // With `checked`, the caller decoded this header from these bytes with
  // DecodePartialHeader (checksum included), which is then not done again;
  // bytes the merger keeps in memory are not checksummed again either,
  // only those it reloads from the run directory.
  Status Add(uint32_t shard, std::string partial, const PartialHeader* checked = nullptr);
  // Records that shard will never deliver a partial.
  void MarkFailed(uint32_t shard);

  // Where early partials can be read back from (the run directory). With a
  // reloader set, partials that arrive before their turn are kept in memory
  // only while they total at most the waiting budget; past that only their shard
  // numbers are, so the coordinator's memory does not grow with the number
  // of shards that finish out of order.
  using Reloader = std::function<Status(uint32_t shard, std::string* out)>;
  void SetReloader(Reloader reload) { reload_ = std::move(reload); }

  // Where the sorted runs' batches read partials from (the run
  // directory's packs, as streams: coordinator/merge/partial_stream.h);
  // without one a batch holds its partials' stored bytes in memory.
  // REQUIRES: called before the first Add.
  void SetOpener(PartialOpener open) { open_ = std::move(open); }

  // The merge's memory share and where runs that do not fit it go (the
  // run directory's spill folder; null keeps them in memory). The results
  // stay in-memory tables while their estimated size (EstimatedTableBytes)
  // would stay at most half the share, and at most kTableCeilingBytes,
  // with the next partial's groups all new, then move to key-sorted runs folded batch
  // by batch (coordinator/merge/run_results.h): the same bytes in a
  // fraction of the memory; runs past the share go to spill files.
  // REQUIRES: called before the first Add.
  void SetMemory(MergeMemory memory) { memory_ = memory; }
  // Tests only (FANFOLD_TEST_ONLY_MERGE_RUNS): once any reduction's table
  // holds more than `groups` groups (checked after each partial) the
  // results move to runs, whatever the share; 0 keeps the tables whatever
  // their size; kRunsByBudget keeps the share's rule. Runs are folded over
  // `threads` key ranges. REQUIRES: called before the first Add.
  static constexpr uint64_t kRunsByBudget = UINT64_MAX;
  void SetRunThreshold(uint64_t groups, size_t threads) {
    run_threshold_ = groups;
    run_threads_ = threads;
  }
  // The runs' key ranges per fold (SetThreads / SetRunThreshold), lowered
  // to at most `threads` (at least 1), e.g. to fit the merge's share.
  size_t run_threads() const { return run_threads_; }
  void LimitRunThreads(size_t threads) { run_threads_ = std::max<size_t>(1, std::min(run_threads_, threads)); }
  // Threads that merge each partial (tables: one key range each,
  // coordinator/merge/range_tables.h; runs: the fold's key ranges, unless
  // SetRunThreshold says otherwise). The bytes do not depend on it.
  // Default: DefaultThreads(). REQUIRES: called before the first Add.
  void SetThreads(size_t threads);
  // With overlap on, the in-memory tables' walk of a partial (or of a
  // batch of them) runs on a thread of its own while Add returns, so the
  // next partials are read, checked and decompressed beside it (on the benchmark's 744 partials
  // the decompression was a serial third of the merge). The walk is
  // settled — its failures recorded, its counts added — before the next
  // partial's walk starts, before anything reads the tables, and once
  // every shard is merged or failed (complete()); until then totals(),
  // late_failures() and malformed_samples() may not count the newest
  // partial: call WaitForMerges() first. The bytes, failures and totals
  // are the same as without it. Off by default. A walk of fewer than
  // min_groups groups stays on the calling thread (a thread costs more).
  // REQUIRES: called before the first Add.
  void SetOverlap(bool overlap, uint64_t min_groups = RangeTables::kMinGroupsForThreads) {
    overlap_ = overlap;
    overlap_min_groups_ = min_groups;
  }
  // Folds the partials waiting in a batch (merger_tables.cc) and waits for
  // every walk (overlap): afterwards totals() and the rest count every
  // partial Add took in turn into the tables, e.g. when a run is
  // interrupted (once in runs, the runs' pending batch is counted when it
  // folds, as before).
  void WaitForMerges() {
    LaunchBatch();
    Settle();
  }
  // Partials folded into the tables in batches so far, and batches folded
  // again one partial at a time (merger_tables.cc; tests and benchmarks).
  uint64_t batched_partials() const { return batched_partials_; }
  uint64_t refolded_batches() const { return refolded_batches_; }
  // The machine's hardware threads, at most kMaxDefaultThreads (at least 1).
  static constexpr size_t kMaxDefaultThreads = 16;
  static size_t DefaultThreads();
  // Reduction r's in-memory tables (while !in_runs()), e.g. for per-range counts.
  const RangeTables& tables(size_t r) const { return results_[r].table; }

  // The in-memory tables' size, estimated (not measured): per group a
  // fixed cost for its key's entry and bytes, and one per measure state.
  static constexpr uint64_t kTableBytesPerGroup = 96;
  static constexpr uint64_t kTableBytesPerState = 80;
  // Past this estimate the runs are no slower than the tables, and far
  // smaller (measured: docs/streaming-merge.md), whatever the share.
  static constexpr uint64_t kTableCeilingBytes = uint64_t{64} << 20;
  uint64_t EstimatedTableBytes() const;
  // What p's groups would add to it, were they all new.
  uint64_t EstimatedTableBytes(const OpenedPartial& p) const;
  // True iff the results moved to runs.
  bool in_runs() const { return runs_ != nullptr; }
  // The runs, once in_runs(): their size, whether spilled, how many folds.
  const RunResults* runs() const { return runs_.get(); }
  // True iff every shard was added or marked failed.
  bool complete() const { return next_ == shard_count_; }
  const MergeTotals& totals() const { return totals_; }
  const std::vector<MalformedReport>& malformed_samples() const { return samples_; }
  // Shards whose partial passed Add's checks but failed to decode when their
  // turn came (a bug or a forged file): shard and message.
  const std::vector<std::pair<uint32_t, std::string>>& late_failures() const { return late_failures_; }

  // Reduction r's finished groups, each finalized into a row (key columns,
  // then the measures' columns) and handed to visit, which may move from
  // the row; a visit error stops the walk and is returned. The order is the
  // result's own (key-byte order once in runs, the table's otherwise):
  // callers order rows themselves (coordinator/output/ordered_rows.h). This
  // is the one way the output stage reads the merge's result, whether it
  // is a table or a run. Fails if merging pushed a bounded measure past its
  // limit. REQUIRES: complete(); r < the plan's reduction count; called
  // once per r (or Finish instead), or, while in_runs(), again (each walk
  // starts over: the output stage walks again when rows came out of order).
  using RowVisitor = std::function<Status(std::vector<Cell>* row)>;
  Status VisitRows(size_t r, const RowVisitor& visit);
  // While in_runs(): the pieces of reduction r's run (the key ranges of
  // its last fold, in key order), which VisitRunPieces walks at once.
  size_t run_pieces(size_t r) const { return runs_ ? runs_->Pieces(r).size() : 0; }
  // VisitRows while in_runs(), each piece of the run walked on a thread of
  // its own (piece 0 on the calling one): visit(p, row) gets piece p's rows
  // in VisitRows' order, and every row of piece p comes before piece p + 1's
  // there. visit is called from several threads at once, never twice at
  // once for one piece. Returns the lowest piece's error (then the keys
  // ascending across pieces are checked). REQUIRES: as VisitRows; in_runs().
  // done(p, status) is called on piece p's thread once its walk ended
  // (status: ok, or why it stopped), before the walks are joined.
  using PieceRowVisitor = std::function<Status(size_t piece, std::vector<Cell>* row)>;
  using PieceDone = std::function<void(size_t piece, const Status& walked)>;
  Status VisitRunPieces(size_t r, const PieceRowVisitor& visit, const PieceDone& done);
  // The last fold straight into the output (docs/streaming-merge.md).
  // With SetDeferLastFold(true) and one reduction, a merge that ends in
  // runs leaves its last batch unfolded: complete() holds and the totals
  // count the batch's partials as if they folded. The output stage then
  // either folds it straight into its rows — PrepareStraight(r) gives the
  // key ranges (0: not possible, e.g. a partial cannot be opened),
  // VisitStraightPieces walks them as VisitRunPieces walks pieces (the
  // folded groups finalized into rows, never written as a run), and once
  // the rows are written ConsumeStraight() ends it (nothing may walk the
  // result again) — or calls FoldPending(), which folds it the usual way
  // (VisitRows and VisitRunPieces do that themselves). When the fold
  // itself fails in VisitStraightPieces (a partial found bad mid-walk, a
  // measure past its limit), *refold is set and Ok returned: the caller
  // drops what it wrote, calls FoldPending() — which restores the totals,
  // drops the bad partial as a late failure and folds again — and walks
  // the run. REQUIRES: SetDeferLastFold before the first Add.
  void SetDeferLastFold(bool defer) { defer_last_fold_ = defer; }
  bool last_fold_pending() const { return deferred_; }
  void FoldPending();
  size_t PrepareStraight(size_t r);
  Status VisitStraightPieces(size_t r, size_t ranges, const PieceRowVisitor& visit, const PieceDone& done,
                             bool* refold);
  void ConsumeStraight();
  // Reduction r's finished table, sorted by key: VisitRows collected into
  // memory (tests and benchmarks; runs stream with VisitRows).
  Result<OutputTable> Finish(size_t r);
  // After VisitRows(r) or Finish(r): per measure of reduction r, the values it skipped
  // (missing, null or not usable, e.g. text for a numeric measure), over all groups.
  const std::vector<uint64_t>& skipped(size_t r) const { return results_[r].skipped; }
  // After VisitRows(r) or Finish(r): per measure of reduction r, the groups whose result is
  // not exact although the measure is exact within its bound (MeasureState::degraded).
  const std::vector<uint64_t>& degraded(size_t r) const { return results_[r].degraded; }

 private:
  void Drain();  // merges every ready partial starting at next_
  // Merger's tables path (merger_tables.cc). Partials ready in a row wait
  // in a batch (batch_) and are folded together, side by side in key order
  // (RangeTables::PlanBatch / ApplyBatch): each group's states are loaded
  // once per batch instead of once per shard, the same bytes. A batch
  // holds at most kBatchPartials partials and BatchBodyLimit() bytes of
  // their decompressed bodies (the last one to join may pass it). It is
  // used once the tables are cut into their key ranges (can_batch), with a
  // reloader, and while no partial failed late and no measure passed its
  // limit. A batch is merged only where folding its partials one at a time
  // would keep the tables (for each partial: the tables' estimate with the
  // groups the ones before it added, plus its own groups all new, within
  // the limit — MergeOne's rule, with the new groups counted exactly by
  // PlanBatch); otherwise, or when it fails, it is folded again one partial
  // at a time (the tables first rebuilt, if it was partly merged), with
  // that path's decisions (runs) and messages.
  static constexpr size_t kBatchPartials = 8;
  static constexpr uint64_t kBatchBodyBytes = uint64_t{48} << 20;
  // The bodies a batch may hold: kBatchBodyBytes, or an eighth of the
  // merge's share when that is less.
  uint64_t BatchBodyLimit() const { return std::min(kBatchBodyBytes, memory_.merge_bytes / 8); }
  struct BatchEntry {
    uint32_t shard = 0;
    std::unique_ptr<OpenedPartial> partial;
  };
  // One walk over the tables (one partial, or a batch): its outcome,
  // filled by Walk (on the walk's thread with overlap), read by Settle.
  struct TableWalk {
    std::vector<BatchEntry> partials;  // in shard order
    // A batch (WalkBatch) iff more than one: LaunchBatch sends a lone
    // partial the one-at-a-time way.
    bool batch() const { return partials.size() > 1; }
    bool check_first = false;
    uint64_t table_bytes = 0;  // batch: EstimatedTableBytes() when it started
    uint64_t limit = UINT64_MAX;  // batch: TableLimit(), or none
    bool too_big = false;      // batch: one at a time would leave the tables (nothing merged)
    Status status;             // why it was dropped (ok: merged)
    bool partly_merged = false;  // ... after some of it was merged
    Status fatal;              // one partial: a measure past its limit
    std::jthread thread;       // with overlap: where Walk runs; last, so joined first
  };
  void Walk(TableWalk* w);  // checks (if asked) and merges w's partial(s)
  void WalkBatch(TableWalk* w);
  // Joins the walk in flight, if any, and applies its outcome: the
  // partials accounted for, or dropped as late failures (the tables
  // rebuilt when partly merged), or a batch folded again one at a time.
  void Settle();
  // Starts w (REQUIRES: no walk in flight): on a thread of its own with
  // overlap and may_overlap when it walks at least overlap_min_groups_
  // groups (a thread costs more than a small walk: 10,000 tiny shards took
  // twice as long with one each).
  void StartWalk(std::unique_ptr<TableWalk> w, bool may_overlap);
  // Folds one opened partial (open: why it could not be opened) the
  // one-at-a-time way, after settling the walk in flight; `bytes` are its
  // stored bytes, or empty to reload. MergeEach: each of a batch's.
  void MergeOne(uint32_t shard, std::unique_ptr<OpenedPartial> p, std::string bytes, const Status& open,
                bool may_overlap);
  void MergeEach(std::vector<BatchEntry> partials, bool may_overlap);
  // Rebuild(end); on failure the merge's fatal error says `what`.
  void RebuildOrFail(uint32_t end, const std::string& what);
  bool Batching(const OpenedPartial& p) const;  // may p join the batch?
  void LaunchBatch();  // starts folding batch_, if any
  uint64_t TableLimit() const { return std::min(memory_.merge_bytes / 2, kTableCeilingBytes); }
  // Reduction r's estimated bytes per group, and p's groups in it.
  uint64_t GroupBytes(size_t r) const { return kTableBytesPerGroup + kTableBytesPerState * results_[r].table.measure_count(); }
  uint64_t GroupsOf(const OpenedPartial& p, size_t r) const;
  // A body buffer for the next partial (kept ones reused), and back; all
  // let go once the tables are done with (runs, or the merge complete).
  std::string TakeBodyBuffer();
  void KeepBodyBuffer(std::string body);
  void ReleaseBodyBuffers();
  // Refolds every reduction's table from scratch over the shards below
  // `end` that were merged, read back with the reloader (after a partial
  // found bad midway through its merge). REQUIRES: reload_ set.
  Status Rebuild(uint32_t end);
  // Adds a merged partial's counts and samples to the totals.
  void Account(uint32_t shard, const OpenedPartial& p);
  void StartRuns();  // moves every reduction's table to a run
  void FoldRuns();   // folds the runs' pending batch, accounting for it
  void DeferLastFold();  // leaves the last batch for the output stage (above)
  // True iff the batch is the last (no shard from `from` on but failed
  // ones) and deferring applies: it then waits even when full.
  bool LastFoldWaits(uint32_t from) const;
  Status VisitRunRows(size_t r, const RowVisitor& visit);
  // Adds shard's partial to the runs' batch: its stored bytes (`bytes`,
  // checksum already checked iff `checked`; empty = reload them), or,
  // with an opener, the run directory's copy; a partial that does not
  // scan is a late failure.
  void AddToRuns(uint32_t shard, std::string bytes, bool checked);

  const Plan* plan_;
  uint32_t shard_count_;
  uint32_t next_ = 0;  // lowest shard not yet merged or skipped
  struct ReductionResult {
    RangeTables table;
    std::vector<uint64_t> skipped;
    std::vector<uint64_t> degraded;
    ReductionResult(const std::vector<MeasureConfig>* configs, size_t threads) : table(configs, threads) {}
  };
  std::vector<ReductionResult> results_;  // per reduction
  uint64_t waiting_budget_;
  std::map<uint32_t, std::string> waiting_;  // early partials by shard ("" = reload it)
  std::vector<std::string> body_buffers_;  // merged partials' body buffers, reused by the next ones
  uint64_t body_buffer_bytes_ = 0;          // their capacity
  uint64_t waiting_bytes_ = 0;               // their total size
  Reloader reload_;
  PartialOpener open_;
  std::vector<bool> failed_;
  MergeTotals totals_;
  std::vector<MalformedReport> samples_;
  std::vector<std::pair<uint32_t, std::string>> late_failures_;
  Status fatal_;  // first merge failure (a limit exceeded across shards)
  uint64_t run_threshold_ = kRunsByBudget;
  MergeMemory memory_;
  size_t run_threads_ = DefaultThreads();
  std::unique_ptr<RunResults> runs_;  // set once the results moved to runs
  bool defer_last_fold_ = false;
  bool deferred_ = false;  // the last batch waits for the output stage
  bool consumed_ = false;  // it was folded straight into the output
  MergeTotals saved_totals_;                // the totals before it was counted
  std::vector<MalformedReport> saved_samples_;
  bool overlap_ = false;
  std::vector<BatchEntry> batch_;  // opened partials waiting to be folded together
  uint64_t batch_bytes_ = 0;       // their bodies' bytes
  uint64_t batched_partials_ = 0;
  uint64_t refolded_batches_ = 0;
  uint64_t overlap_min_groups_ = RangeTables::kMinGroupsForThreads;
  bool batch_ready_ = false;       // the tables can take batches (as of the last Settle)
  uint64_t settled_table_bytes_ = 0;  // EstimatedTableBytes() as of the last Settle
  std::unique_ptr<TableWalk> walking_;  // the walk in flight (overlap), if any; last, so joined first
};

}  // namespace fanfold
