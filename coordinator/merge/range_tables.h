// RangeTables: one reduction's in-memory result in the coordinator's merge
// (coordinator/run/merger's tables path) split by key range over several
// GroupTables, so that each partial is merged on several threads at once,
// each thread owning one range's table.
//
// The rule that keeps the bytes independent of the thread count: every key
// belongs to exactly one range, and its states are folded there alone, from
// each partial in shard order, exactly as one table folds them — so every
// group's states are the same whatever the number of ranges. The result's
// encoding (Encode) writes the ranges in key order, which is the one table's
// encoding; Finish's rows are sorted by key either way.
//
// The cut keys (range i holds keys k with cut[i-1] <= k < cut[i]) are taken
// once, from the first partial with at least kMinGroupsToCut groups: its
// keys at evenly spaced positions. Until then every key goes to range 0;
// when the cuts are taken, range 0's groups are moved to their ranges
// (encoded, sliced, decoded: Decode(Encode(s)) behaves as s, the property
// the sorted runs rely on too, docs/streaming-merge.md).
//
// Each partial's group table is scanned once for framing (the groups' byte
// offsets and where the ranges start); then each range's slice is checked or
// merged on its own thread. Errors name the same group, with the same
// message, as one table's walk: the lowest range's first error, and a framing
// error only once every group before it was walked. The slices are what an
// MPI transport could hand to several ranks (docs/streaming-merge.md). Not
// thread-safe itself; it runs its own threads inside CheckEncoded,
// MergeEncoded, PlanBatch and ApplyBatch.
#pragma once

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "common/base/byte_io.h"
#include "common/base/status.h"
#include "common/measures/measure.h"
#include "common/partial/group_table.h"

namespace fanfold {

// Where one key range's groups lie in a group-table encoding: bytes
// [begin, end), `count` groups, the first being group `first` of the whole.
// A range's slices of every partial, in shard order, are all a merge of
// that range needs — the unit an MPI run could hand to one rank.
struct RangeSlice {
  size_t begin = 0, end = 0;
  uint64_t first = 0, count = 0;
};

// Cuts an encoded group table (measure_count states a group) at the cut
// keys (ascending; range i holds keys k with cuts[i-1] <= k < cuts[i]) into
// cuts.size() + 1 slices, reading its framing once. On bad framing returns
// GroupTable's message for it, with *bad_range the range of the group it
// names; the slices then end before that group.
Status CutByKeys(std::string_view encoded, size_t measure_count, const std::vector<std::string>& cuts,
                 std::vector<RangeSlice>* slices, size_t* bad_range);

class RangeTables {
 public:
  static constexpr uint64_t kMinGroupsToCut = 1024;
  // A partial with fewer groups has its ranges walked one after another in
  // the calling thread (the same ranges, so the same bytes).
  static constexpr uint64_t kMinGroupsForThreads = 8192;

  // configs must outlive this; ranges >= 1 (1 = one table, this thread).
  // Tests pass min_groups_for_threads 0 to use threads on small partials.
  RangeTables(const std::vector<MeasureConfig>* configs, size_t ranges,
              uint64_t min_groups_for_threads = kMinGroupsForThreads);

  // GroupTable::CheckEncoded / MergeEncoded over the ranges, in parallel.
  Status CheckEncoded(std::string_view encoded) { return Walk(encoded, /*merge=*/false); }
  Status MergeEncoded(std::string_view encoded) { return Walk(encoded, /*merge=*/true); }

  // The batched fold (GroupTable::PlanBatch / ApplyBatch) over the ranges,
  // in parallel: several later shards' encodings (in shard order) at once,
  // the same states as MergeEncoded on each in turn. PlanBatch scans each
  // encoding's framing, cuts it by range and finds every key, changing
  // nothing; (*new_by_input)[i]: the groups the tables lack whose first
  // encoding is i (what MergeEncoded of encoding i would add after the ones
  // before it). Then ApplyBatch merges (REQUIRES: PlanBatch succeeded, the
  // encodings' bytes are still live and nothing changed the tables in
  // between), or DropBatch forgets the plan. A failure gives no message to
  // show (callers fold the shards one at a time again, from a rebuilt table
  // after ApplyBatch failed, for MergeEncoded's own messages).
  // REQUIRES: can_batch().
  bool can_batch() const { return cut_ || wanted_ == 1; }
  Status PlanBatch(const std::vector<std::string_view>& encoded, std::vector<uint64_t>* new_by_input);
  Status ApplyBatch();
  void DropBatch() {
    for (GroupTable& t : tables_) t.DropBatch();
  }

  size_t group_count() const;
  size_t range_count() const { return tables_.size(); }
  size_t measure_count() const { return configs_->size(); }
  // Range i's table (its keys lie in range i only).
  const GroupTable& table(size_t i) const { return tables_[i]; }
  // The states of `key`'s group in its range's table, created if new.
  MeasureState* const* FindOrAdd(std::string_view key);
  // The cut keys taken (empty until then, or with one range).
  const std::vector<std::string>& cuts() const { return cuts_; }
  // Groups merged into range i so far, over all partials (for the bench's
  // per-thread counts).
  uint64_t merged_groups(size_t i) const { return merged_[i]; }

  // CPU seconds (each thread's own clock) spent walking ranges, summed over
  // ranges and partials, and the same taking only the slowest range of each
  // partial: the walks' critical path, which the wall time approaches when
  // every thread has a core of its own (the bench reports both).
  double walk_cpu_s() const { return walk_cpu_s_; }
  double critical_walk_cpu_s() const { return critical_walk_cpu_s_; }

  // The encoding one GroupTable holding every group would write.
  void Encode(ByteWriter& w) const;
  // Empties every table (the cuts stay) and zeroes the merged counts.
  void Clear();

 private:
  using Slice = RangeSlice;
  Status Walk(std::string_view encoded, bool merge);
  // Runs walk(i) for each range i with groups[i] > 0 — on threads of their
  // own (range 0's on the calling one) when they total at least
  // min_groups_for_threads_ and more than one range has groups — and adds
  // their CPU times to the walks' totals.
  template <class RangeWalk>
  void OnRanges(const std::vector<uint64_t>& groups, const RangeWalk& walk);
  Status Cut(std::string_view encoded, std::vector<Slice>* slices, size_t* bad_range) {
    return CutByKeys(encoded, configs_->size(), cuts_, slices, bad_range);
  }
  // Takes the cuts from `encoded` (REQUIRES: its framing is good) and moves
  // range 0's groups to their ranges.
  void TakeCuts(std::string_view encoded);
  size_t RangeOf(std::string_view key) const;

  const std::vector<MeasureConfig>* configs_;
  size_t wanted_;                  // ranges asked for
  uint64_t min_groups_for_threads_;
  std::vector<std::string> cuts_;  // ascending; ranges = cuts_.size() + 1 once taken
  bool cut_ = false;
  std::vector<GroupTable> tables_;
  std::vector<uint64_t> merged_;
  std::vector<uint64_t> batch_groups_;  // the planned batch's groups per range
  double walk_cpu_s_ = 0;
  double critical_walk_cpu_s_ = 0;
};

}  // namespace fanfold
