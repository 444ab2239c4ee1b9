// ExtremeState: the state of `min` and `max` — the smallest (largest)
// usable number seen, and whether there was one. -0.0 is stored as 0.0 so
// the result does not depend on which of two equal zeros came first.
// Single-threaded.
#pragma once

#include <cmath>

#include "common/measures/measure.h"

namespace fanfold {

class ExtremeState final : public MeasureState {
 public:
  // is_max: true for kMax, false for kMin.
  explicit ExtremeState(bool is_max) : is_max_(is_max) {}

  bool Add(const Value* args) override {
    double x;
    if (!UsableNumber(args[0], &x, &skipped_)) return true;
    Offer(x == 0 ? 0.0 : x);
    return true;
  }
  Status Merge(const MeasureState& other) override;
  // Encoding: varint skipped, u8 has (0|1), then iff has: f64 value.
  void Encode(ByteWriter& w) const override;
  Status Decode(ByteReader& r) override;
  // Float(value), or Null when no usable value was added.
  void Finalize(std::vector<Cell>* out) const override;
  uint64_t skipped() const override { return skipped_; }

 private:
  void Offer(double x) {
    if (!has_ || (is_max_ ? x > value_ : x < value_)) value_ = x;
    has_ = true;
  }

  bool is_max_;
  bool has_ = false;
  double value_ = 0;
  uint64_t skipped_ = 0;
};

}  // namespace fanfold
