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

#include "common/byte_io.h"

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
  // lowest index, span x varint count (first and last non-zero).
  void Encode(ByteWriter& w) const;
  // Returns false (leaving *this unchanged) on corrupt input.
  bool Decode(ByteReader& r);

 private:
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
