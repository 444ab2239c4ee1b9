// GroupFold: the streaming merge's fold. Given the accumulated result of
// shards [0, k) as a key-sorted run (a GroupTable encoding, or nothing) and
// the group-table encodings of the next shards' partials in shard order, it
// walks them all at once in key order (a k-way merge over
// EncodedGroupCursors) and writes the result of shards [0, k + n) as a new
// run. Each key's states fold exactly as coordinator/run/merger's in-memory
// GroupTable folds them: a left fold in shard order (a state starts empty,
// or from the run's, and MergeEncoded takes each later shard's bytes), so
// the bytes equal that table's Encode whatever the batch sizes, and a key
// only the run holds is copied through untouched. Memory: one state per
// measure plus one cursor per input, whatever the number of groups.
//
// Key ranges split the fold over threads: every key lies in exactly one
// range, is folded there alone and in shard order, and ranges are written
// in key order, so the bytes do not depend on the thread count.
// A GroupFold is single-threaded; FoldEncoded runs one per range.
// Design and the road from here: docs/streaming-merge.md.
#pragma once

#include <cstdint>
#include <functional>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include "common/base/status.h"
#include "common/measures/measure.h"
#include "coordinator/merge/partial_stream.h"
#include "coordinator/merge/run_cursor.h"

namespace fanfold {

struct FoldInputs {
  // The run so far (a GroupTable encoding written by a fold or by
  // GroupTable::Encode), or empty when there is none yet (an encoding is
  // never empty: it holds at least its group count).
  std::string_view base;
  // Or, when not empty, the run so far as pieces (a run a fold wrote over
  // key ranges, in memory or spilled): base is then ignored.
  std::vector<RunPiece> base_pieces;
  // Partials' group-table encodings (one reduction each), in shard order.
  std::vector<std::string_view> partials;
  // Or, when not empty (partials is then ignored), the partials as stored
  // bytes, each read as a stream of reduction `reduction`'s groups
  // (coordinator/merge/partial_stream.h), in shard order, with their group
  // counts (ScanStoredPartial's). Each range of a fold opens its own stream
  // of each: memory per range and partial, not per group.
  std::vector<const StoredPartialBytes*> streams;
  std::vector<uint64_t> stream_groups;
  size_t reduction = 0;
  size_t partial_count() const { return streams.empty() ? partials.size() : streams.size(); }
};

// Keys k with lo <= k < hi; no upper bound when !bounded.
struct KeyRange {
  std::string lo;
  std::string hi;
  bool bounded = false;
};

// What a fold failed on: status, and which partial (its index in
// FoldInputs::partials) holds the bad bytes, or kNoPartial when the base
// run is bad or a bounded measure went past its limit. A failed fold leaves
// the base run as it was: the caller drops that partial and folds again.
struct FoldOutcome {
  static constexpr size_t kNoPartial = SIZE_MAX;
  Status status;
  size_t bad_partial = kNoPartial;
  uint64_t groups = 0;  // groups written
};

class GroupFold {
 public:
  // configs (one reduction's measures) must outlive the fold.
  explicit GroupFold(const std::vector<MeasureConfig>* configs);

  // Appends the groups of `in` whose keys lie in `range`, folded, to *out in
  // ascending key order: per group its key and states, framed as in a
  // GroupTable encoding but without the leading group count.
  // With `drain`, it is called whenever *out holds kDrainBytes or more
  // (and once at the end): it writes *out somewhere and clears it; a drain
  // failure ends the fold (kNoPartial).
  using Drain = std::function<Status(std::string* out)>;
  static constexpr size_t kDrainBytes = size_t{256} << 10;
  FoldOutcome FoldRange(const FoldInputs& in, const KeyRange& range, std::string* out,
                        const Drain* drain = nullptr);

  // FoldRange without writing the groups: each folded group's key and
  // states (as the in-memory table would hold them: a group only the base
  // run has is decoded from its bytes) go to visit, in ascending key
  // order; nothing is encoded. A visit failure ends the fold with that
  // status (kNoPartial) and visit_failed set. Used to fold the last batch
  // straight into the output (docs/streaming-merge.md).
  using Visit = std::function<Status(std::string_view key, const std::vector<std::unique_ptr<MeasureState>>& states)>;
  FoldOutcome FoldRangeTo(const FoldInputs& in, const KeyRange& range, const Visit& visit, bool* visit_failed);

 private:
  const Visit* visit_ = nullptr;  // set while FoldRangeTo runs
  bool visit_failed_ = false;
  const std::vector<MeasureConfig>* configs_;
  std::vector<std::unique_ptr<MeasureState>> states_;   // the key being folded
  std::vector<std::unique_ptr<MeasureState>> scratch_;  // MergeEncoded's
  std::vector<std::string> empty_;                      // an empty state's bytes per measure
  std::string encoded_;                                 // one state's bytes
};

// Cut keys for `parts` ranges of about equal work: keys of the input with
// the most groups at spaced positions (its framing is read, no state).
// Evenly spaced when seek_share is 0. Otherwise every range after the
// first also pays to reach its first key: a partial read as a stream
// (FoldInputs::streams) is decoded from its start, at seek_share of the
// cost of folding a group for each stream group it skips (a run or an
// in-memory partial is skipped by its framing, counted as free). Range i
// (of n) then ends at fraction (1 - a^(i+1)) / (1 - a^n) of the keys, with
// a = 1 - seek_share * (stream groups) / (all input groups), which makes
// every range's fold plus seek equal when groups spread evenly over the
// keys. Fewer come back when that input has fewer groups, or bad framing
// before a cut (which the fold then reports, naming the input). The cuts
// never change the bytes, only how the work splits.
std::vector<std::string> SplitKeys(const FoldInputs& in, size_t measure_count, size_t parts, double seek_share = 0);

// The seek share of the last fold straight into formatted rows, measured
// (callgrind, 1.46 M groups of count + sum, 5 streamed partials, 2
// ranges): skipping a stream group costs about 640 instructions, folding
// an input group into rows about 2,700. Folds into runs cut evenly: moving
// a cut later adds seeking, and their total matters more than their
// critical path (they run beside the workers; the result waits only for
// the last fold).
inline constexpr double kSeekShareIntoRows = 0.24;

// The key ranges FoldEncoded folds at once: one, or up to `threads` cut by
// SplitKeys.
std::vector<KeyRange> CutRanges(const FoldInputs& in, size_t measure_count, size_t threads, double seek_share = 0);

// Folds range i into *outs[i] (appending its groups, without a count) with
// drains[i] (may be null, or empty), ranges 1.. on their own threads. On
// success outcome.groups is the total and groups[i] each range's. On
// failure, the lowest range's (the same whatever the thread count).
FoldOutcome FoldRanges(const std::vector<MeasureConfig>* configs, const FoldInputs& in,
                       const std::vector<KeyRange>& ranges, const std::vector<std::string*>& outs,
                       const std::vector<GroupFold::Drain>& drains, std::vector<uint64_t>* groups);

// The whole fold into *out (replacing it) as a GroupTable encoding, over
// `threads` key ranges folded at once (1 = in this thread).
FoldOutcome FoldEncoded(const std::vector<MeasureConfig>* configs, const FoldInputs& in, size_t threads,
                        std::string* out);

}  // namespace fanfold
