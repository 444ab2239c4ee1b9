// MomentsState: the state of `mean`, `variance` and `stddev` — the count n,
// the running mean and M2 (sum of squared deviations from the mean), updated
// per value by Welford's method (Technometrics 4(3), 1962) and merged by the
// pairwise formula of Chan, Golub & LeVeque (Stanford CS-TR-79-773, 1979).
// Both avoid the cancellation of the textbook sum-of-squares formula.
// Beside them, while every value is an integer, their exact sum (WideSum):
// the mean of integers is that sum divided by n, rounded once.
// Single-threaded.
#pragma once

#include <cmath>

#include "common/base/wide_sum.h"
#include "common/measures/measure.h"
#include "common/measures/same_state_merge.h"

namespace fanfold {

class MomentsState final : public SameStateMerge<MomentsState> {
 public:
  static constexpr const char* kLabel = "moments";

  // kind: kMean, kVariance or kStddev; it only chooses what Finalize emits.
  explicit MomentsState(MeasureKind kind) : kind_(kind) {}

  bool Add(const Value* args) override {
    Value v;
    if (!UsableNumeric(args[0], &v, &skipped_)) return true;
    // An integer keeps the sum exact until it would leave the WideInt range
    // (more than 2^63 values); a non-integer ends exactness for good.
    all_integers_ = all_integers_ && v.is_integer() && wide_.Add(v.Wide());
    const double x = v.number;
    ++n_;
    const double delta = x - mean_;
    mean_ += delta / static_cast<double>(n_);
    m2_ += delta * (x - mean_);
    return true;
  }
  // Encoding: a CountedPair (common/measures/counted_pair.h) of mean and M2,
  // then iff n > 0: u8 all_integers (0|1), iff 1 the exact sum (WideSum,
  // 16 bytes).
  void Encode(ByteWriter& w) const override;
  Status Decode(ByteReader& r) override;
  // mean: Float — the exact sum / n rounded once while every value was an
  // integer, else the running mean; Null iff n = 0. variance = M2/(n-1),
  // stddev = its square root: Float, Null iff n < 2.
  void Finalize(std::vector<Cell>* out) const override;
  uint64_t skipped() const override { return skipped_; }

  uint64_t n() const { return n_; }
  // The result of `mean` (0 when empty).
  double mean() const { return all_integers_ && n_ > 0 ? WideSum::DivideRounded(wide_.total(), n_) : mean_; }
  // True iff every value was an integer and their sum fits a WideInt.
  bool all_integers() const { return all_integers_; }
  double m2() const { return m2_; }

 private:
  friend class SameStateMerge<MomentsState>;
  MomentsState EmptyLike() const { return MomentsState(kind_); }
  // mean, variance and stddev keep the same state: any two merge.
  bool SameConfig(const MomentsState&) const { return true; }
  void MergeSame(const MomentsState& o);  // Merge's arithmetic
  MeasureKind kind_;
  uint64_t n_ = 0;
  uint64_t skipped_ = 0;
  double mean_ = 0;
  double m2_ = 0;
  bool all_integers_ = true;  // vacuously while empty
  WideSum wide_;              // the exact sum while all_integers_, else unused
};

}  // namespace fanfold
