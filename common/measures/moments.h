// MomentsState: the state of `mean`, `variance` and `stddev` — the count n,
// the running mean and M2 (sum of squared deviations from the mean), updated
// per value by Welford's method (Technometrics 4(3), 1962) and merged by the
// pairwise formula of Chan, Golub & LeVeque (Stanford CS-TR-79-773, 1979).
// Both avoid the cancellation of the textbook sum-of-squares formula.
// Single-threaded.
#pragma once

#include <cmath>

#include "common/measures/measure.h"
#include "common/measures/same_state_merge.h"

namespace fanfold {

class MomentsState final : public SameStateMerge<MomentsState> {
 public:
  static constexpr const char* kLabel = "moments";

  // kind: kMean, kVariance or kStddev; it only chooses what Finalize emits.
  explicit MomentsState(MeasureKind kind) : kind_(kind) {}

  bool Add(const Value* args) override {
    double x;
    if (!UsableNumber(args[0], &x, &skipped_)) return true;
    ++n_;
    const double delta = x - mean_;
    mean_ += delta / static_cast<double>(n_);
    m2_ += delta * (x - mean_);
    return true;
  }
  // Encoding: a CountedPair (common/measures/counted_pair.h) of mean and M2.
  void Encode(ByteWriter& w) const override;
  Status Decode(ByteReader& r) override;
  // mean: Float, Null iff n = 0. variance = M2/(n-1), stddev = its square
  // root: Float, Null iff n < 2.
  void Finalize(std::vector<Cell>* out) const override;
  uint64_t skipped() const override { return skipped_; }

  uint64_t n() const { return n_; }
  double mean() const { return mean_; }
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
};

}  // namespace fanfold
