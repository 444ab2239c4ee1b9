// DDSketchStore: the bucket counts of one sign of a DDSketch (Masson, Rim &
// Lee 2019): a dense run of counts over consecutive bucket indices, grown on
// demand. Its span is bounded: when the non-empty buckets would span more
// than kMaxSpan indices, the lowest ones are folded into the lowest bucket
// kept (the paper's collapsing store). The fold depends only on the highest
// index ever seen, so merging stays exact and order-independent. Owned by a
// DDSketchState; single-threaded.
#pragma once

#include <cstdint>
#include <vector>

#include "common/base/byte_io.h"

namespace fanfold {

class DDSketchStore {
 public:
  // 65536 buckets cover magnitudes across a factor gamma^65536: e^1311 for
  // alpha = 0.01 (all of double's range), about 1e57 for alpha = 0.001.
  static constexpr int32_t kMaxSpan = 1 << 16;
  // Bucket indices are clamped to this range; only an alpha far below any
  // sensible accuracy could reach it.
  static constexpr int32_t kMinIndex = -(1 << 30);
  static constexpr int32_t kMaxIndex = 1 << 30;
  // Totals stay below this, so rank arithmetic cannot overflow.
  static constexpr uint64_t kMaxTotal = uint64_t{1} << 62;

  // Adds count (>= 1) to bucket index. REQUIRES kMinIndex <= index <= kMaxIndex.
  void Add(int32_t index, uint64_t count = 1) {
    if (total_ != 0 && index >= lo_ && index <= hi_) {
      counts_[static_cast<size_t>(index - offset_)] += count;  // the common case
      total_ += count;
      return;
    }
    AddSlow(index, count);
  }
  void MergeFrom(const DDSketchStore& other);

  uint64_t total() const { return total_; }
  bool empty() const { return total_ == 0; }
  // Lowest/highest non-empty index. REQUIRES !empty().
  int32_t lo() const { return lo_; }
  int32_t hi() const { return hi_; }
  uint64_t CountAt(int32_t index) const;

  // The index of the bucket holding the value of 0-based rank r, counting
  // from the lowest index (ascending) or from the highest (descending).
  // REQUIRES r < total().
  int32_t IndexOfRank(uint64_t r) const;
  int32_t IndexOfRankDescending(uint64_t r) const;

  // Encoding: varint span (0 iff empty), then iff span > 0: zigzag varint
  // lowest index, then entries covering exactly `span` buckets from there:
  // varint c > 0 is one bucket's count; c = 0 is followed by varint r >= 1,
  // r empty buckets. The first and last buckets are non-empty and no two
  // runs of empty buckets are adjacent, so every store has one encoding —
  // and a sparse store costs bytes per non-empty bucket, not per index.
  void Encode(ByteWriter& w) const;
  // Returns false (leaving *this unchanged) on corrupt input.
  bool Decode(ByteReader& r);

  // An encoded store, checked but not copied: its counts stay in the
  // input, where `counts` is positioned at the first one.
  struct EncodedRun {
    int32_t lo = 0;
    uint64_t span = 0;  // 0 iff empty
    uint64_t total = 0;
    ByteReader counts{std::string_view()};  // at the first entry
    // The first kListed non-empty buckets as ReadRun decoded them (bucket
    // lo + offset[j] holds count[j]); all of them iff listed_all, and then
    // MergeRun and AssignRun read these instead of decoding the bytes again.
    static constexpr uint32_t kListed = 16;
    uint32_t listed = 0;
    bool listed_all = false;
    uint16_t offset[kListed];  // < span <= kMaxSpan
    uint64_t count[kListed];
  };
  // Reads and checks one encoded store (Decode's checks) from r. Returns
  // false on corrupt input.
  static bool ReadRun(ByteReader& r, EncodedRun* out);
  // Adds a run's counts, as MergeFrom adds a decoded store's.
  // REQUIRES: run was filled by ReadRun.
  void MergeRun(const EncodedRun& run);
  // Reads one encoded store's framing from r (unchecked: a hint only) and
  // prefetches the buckets of this store that its first non-empty buckets
  // would add to; never touches memory outside counts_.
  void PrefetchRun(ByteReader& r) const;
  // Replaces this store with the run (what Decode does after ReadRun).
  // REQUIRES: run was filled by ReadRun.
  void AssignRun(const EncodedRun& run);

 private:
  // Calls visit(i, count) for each non-empty bucket lo + i of a run, in
  // index order. REQUIRES: run was filled by ReadRun.
  template <class Visit>
  static void ForEachBucket(const EncodedRun& run, Visit visit) {
    if (run.listed_all) {
      for (uint32_t j = 0; j < run.listed; ++j) visit(run.offset[j], run.count[j]);
      return;
    }
    ByteReader in = run.counts;
    for (uint64_t i = 0; i < run.span;) {
      const uint64_t c = in.Varint();
      if (c == 0) {
        i += in.Varint();
      } else {
        visit(i, c);
        ++i;
      }
    }
  }
  void AddSlow(int32_t index, uint64_t count);
  // Makes counts_ cover [lo, hi], keeping what it holds.
  void Cover(int32_t lo, int32_t hi);

  std::vector<uint64_t> counts_;  // counts_[i] is bucket offset_ + i
  int32_t offset_ = 0;
  int32_t lo_ = 0;  // valid iff total_ > 0
  int32_t hi_ = 0;
  uint64_t total_ = 0;
};

}  // namespace fanfold
