// ExtremeState: the state of `min` and `max` — the smallest (largest)
// usable number seen, kept as it was read (an exact int64/uint64 or a
// double; Value::AsNumeric) and compared exactly (CompareNumbers: an integer
// against a double as mathematics orders them), and whether there was one.
// On equal numbers (5 and 5.0) the earlier input stays. -0.0 is stored as
// 0.0 so the result does not depend on which of two equal zeros came first.
// Single-threaded.
#pragma once

#include "common/base/number_encoding.h"
#include "common/base/value_compare.h"
#include "common/measures/measure.h"

namespace fanfold {

class ExtremeState final : public MeasureState {
 public:
  // is_max: true for kMax, false for kMin.
  explicit ExtremeState(bool is_max) : is_max_(is_max) {}

  bool Add(const Value* args) override {
    Value x;
    if (!UsableNumeric(args[0], &x, &skipped_)) return true;
    Offer(NumberEncoding::Canonical(x));
    return true;
  }
  Status Merge(const MeasureState& other) override;
  // Encoding: varint skipped, u8 has (0|1), then iff has: the value as
  // NumberEncoding writes it ('n' f64 | 'i' i64 | 'u' u64).
  void Encode(ByteWriter& w) const override;
  Status Decode(ByteReader& r) override;
  // Int (exact) or Float(value), or Null when no usable value was added.
  void Finalize(std::vector<Cell>* out) const override;
  uint64_t skipped() const override { return skipped_; }

 private:
  // REQUIRES: x is a kNumber, not NaN (UsableNumeric).
  void Offer(const Value& x) {
    if (!has_ || CompareNumbers(x, value_) == (is_max_ ? 1 : -1)) value_ = x;
    has_ = true;
  }

  bool is_max_;
  bool has_ = false;
  Value value_;
  uint64_t skipped_ = 0;
};

}  // namespace fanfold
