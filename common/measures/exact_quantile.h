// ExactQuantileState: the state of `quantile` — every usable number of the
// group (at most config.limit of them), from which Finalize computes sample
// quantiles by Hyndman & Fan (1996) definition 7, the one R uses by default
// and Python's statistics.quantiles(method='inclusive') implements. Merge
// concatenates. Single-threaded.
#pragma once

#include <cmath>
#include <vector>

#include "common/measures/measure.h"

namespace fanfold {

// Hyndman & Fan (1996) type 7 on sorted (ascending, no NaN) values:
// h = (n-1)p, Q(p) = x[floor h] + (h - floor h)(x[floor h + 1] - x[floor h])
// with 0-based x. REQUIRES: !sorted.empty(), 0 <= p <= 1.
double Type7Quantile(const std::vector<double>& sorted, double p);

class ExactQuantileState final : public MeasureState {
 public:
  explicit ExactQuantileState(const MeasureConfig& config);

  // Returns false iff this value would be number limit + 1.
  bool Add(const Value* args) override {
    double x;
    if (!UsableNumber(args[0], &x, &skipped_)) return true;
    if (values_.size() >= limit_) return false;
    values_.push_back(x == 0 ? 0.0 : x);  // one zero, so sorting is canonical
    sorted_ = false;
    return true;
  }
  // LimitExceeded iff the two states together hold more than limit values.
  Status Merge(const MeasureState& other) override;
  // Encoding: varint skipped, varint count, count x f64 in ascending order
  // (so equal multisets encode to equal bytes whatever the input order).
  void Encode(ByteWriter& w) const override;
  Status Decode(ByteReader& r) override;
  // One Float per probability, in config order; all Null when empty.
  void Finalize(std::vector<Cell>* out) const override;
  uint64_t skipped() const override { return skipped_; }

  size_t size() const { return values_.size(); }

 private:
  void Sort() const;

  std::vector<double> probabilities_;
  uint64_t limit_;
  uint64_t skipped_ = 0;
  // Sorted lazily by Encode/Finalize, which are logically const.
  mutable std::vector<double> values_;
  mutable bool sorted_ = true;
};

}  // namespace fanfold
