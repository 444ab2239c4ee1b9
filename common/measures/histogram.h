// HistogramState: the state of `histogram` — how many values fell below the
// first edge, into each bin [edge i, edge i+1) and at or above the last edge
// (common/measures/histogram_bins.h). Counts are exact integers and merge
// adds them, so any split of the input gives the same state. Integers
// compare with the edges exactly (2^53 + 1 lies above the edge 2^53).
// Single-threaded, like every state.
#pragma once

#include <cstdint>
#include <vector>

#include "common/measures/measure.h"

namespace fanfold {

class HistogramState final : public MeasureState {
 public:
  // REQUIRES: config's bins checked (CheckHistogramBins).
  explicit HistogramState(const MeasureConfig& config);

  // Skips (and counts in skipped()) what UsableNumeric refuses: missing,
  // null, bools, objects, non-numeric text and NaN. -inf counts below,
  // +inf above.
  bool Add(const Value* args) override;
  Status Merge(const MeasureState& other) override;
  // Encoding: varint skipped, varint slots (bins + 2), varint k, then k x
  // (varint gap, varint count >= 1) for the non-zero slots in ascending
  // order; a slot's index is the previous one's + 1 + gap (the first: gap).
  void Encode(ByteWriter& w) const override;
  Status Decode(ByteReader& r) override;
  // One Int per slot: below, each bin, above.
  void Finalize(std::vector<Cell>* out) const override;
  uint64_t skipped() const override { return skipped_; }

  // The slot of number x among ascending edges: 0 below edges[0], i for
  // [edges[i-1], edges[i]), edges.size() at or above the last edge; the
  // number of edges <= x, as Python's bisect.bisect_right counts them.
  // REQUIRES: x is a kNumber, not NaN.
  static size_t Slot(const std::vector<double>& edges, const Value& x);

  const std::vector<uint64_t>& counts() const { return counts_; }

 private:
  std::vector<double> edges_;
  std::vector<uint64_t> counts_;  // edges_.size() + 1 slots (2 without edges)
  uint64_t skipped_ = 0;
};

}  // namespace fanfold
