// SumState: the state of `sum`, a compensated sum (Neumaier 1974, ZAMM 54):
// a running sum plus a running correction that captures the low-order bits
// each addition loses, so the result is as if summed with about twice the
// precision. Merge adds the other sum and its correction the same way.
// Single-threaded.
#pragma once

#include <cmath>

#include "common/measures/measure.h"
#include "common/measures/same_state_merge.h"

namespace fanfold {

class SumState final : public SameStateMerge<SumState> {
 public:
  static constexpr const char* kLabel = "sum";

  bool Add(const Value* args) override {
    double x;
    if (!UsableNumber(args[0], &x, &skipped_)) return true;
    ++n_;
    AddCompensated(x);
    return true;
  }
  // Encoding: a CountedPair (common/measures/counted_pair.h) of sum and correction.
  void Encode(ByteWriter& w) const override;
  Status Decode(ByteReader& r) override;
  // Float(sum + correction), or Null when no usable value was added.
  void Finalize(std::vector<Cell>* out) const override;
  uint64_t skipped() const override { return skipped_; }

  // The compensated result; 0 when empty. Overflow gives +-inf, and
  // inf + -inf gives NaN, as plain summation would.
  double Result() const { return std::isfinite(sum_) ? sum_ + correction_ : sum_; }

 private:
  friend class SameStateMerge<SumState>;
  SumState EmptyLike() const { return SumState(); }
  bool SameConfig(const SumState&) const { return true; }
  void MergeSame(const SumState& o);  // Merge's arithmetic
  void AddCompensated(double x) {
    const double t = sum_ + x;
    // Neumaier's branch: whichever operand is larger keeps its bits in t;
    // the smaller one's lost bits are recovered exactly.
    if (std::fabs(sum_) >= std::fabs(x))
      correction_ += (sum_ - t) + x;
    else
      correction_ += (x - t) + sum_;
    sum_ = t;
  }

  uint64_t n_ = 0;
  uint64_t skipped_ = 0;
  double sum_ = 0;
  double correction_ = 0;
};

}  // namespace fanfold
