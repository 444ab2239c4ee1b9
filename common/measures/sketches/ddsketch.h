// DDSketchState: the state of `ddsketch`, a DDSketch (Masson, Rim &
// Lee 2019, PVLDB 12(12)). With gamma = (1+alpha)/(1-alpha), a value x > 0
// is counted in bucket i = ceil(log_gamma x), the interval
// (gamma^(i-1), gamma^i], whose estimate 2 gamma^i/(gamma+1) is within
// relative error alpha of every value in it. Negative values are counted by
// magnitude in a store of their own, zeros in a counter; the exact minimum
// and maximum are kept too. Merge adds counts bucket by bucket: exact and
// order-independent. Single-threaded.
//
// Guarantee. Let x(0) <= ... <= x(n-1) be the values added, h = (n-1)p,
// j = floor(h), f = h - j; the exact type-7 quantile (Hyndman & Fan 1996)
// is Q = x(j) + f (x(j+1) - x(j)). The sketch finds the buckets of the
// order statistics x(j) and x(j+1) exactly by rank, and returns
// E = e(j) + f (e(j+1) - e(j)) from their estimates: the bucket estimate
// clamped to [min, max], or min / max itself for ranks 0 and n-1. Then
//     |E - Q| <= alpha ((1-f) |x(j)| + f |x(j+1)|),
// which is alpha |Q| unless x(j) < 0 < x(j+1). For f = 0 (p = 0, p = 1, or
// (n-1)p whole) it is the paper's bound on the order statistic itself, and
// p = 0 / p = 1 return the exact min / max. Up to floating-point rounding of
// the estimates (about 1e-13 relative), and provided no bucket was folded:
// the magnitudes of each sign must span less than gamma^65536 (see
// DDSketchStore). Infinite values are skipped (counted in skipped()).
#pragma once

#include <cmath>
#include <cstdint>
#include <cstring>
#include <memory>
#include <vector>

#include "common/measures/sketches/ddsketch_store.h"
#include "common/measures/measure.h"

namespace fanfold {

class DDSketchState final : public MeasureState {
 public:
  // Uses config.alpha (REQUIRES 0 < alpha < 1; values past [1e-9, 0.999]
  // are clamped there) and config.probabilities.
  explicit DDSketchState(const MeasureConfig& config);

  bool Add(const Value* args) override {
    return AddWith(args, [this](double m) { return Index(m); });
  }

  // Remembers the bucket index of recently seen magnitudes, so that a value
  // seen again skips the logarithm: one per column of states made from one
  // config (so one gamma). A direct-mapped table of 2^13 entries, each the
  // magnitude's bits and the index Index computed for it, so a hit returns
  // exactly what Index returns. Not thread-safe.
  class IndexMemo {
   public:
    int32_t IndexOf(double magnitude, const DDSketchState& s) {
      uint64_t bits;
      std::memcpy(&bits, &magnitude, sizeof bits);
      // Fibonacci hashing of the bits; a magnitude is > 0, so its bits are
      // never 0, the empty entry's key.
      Entry& e = entries_[(bits * 0x9E3779B97F4A7C15ull) >> (64 - kSlotBits)];
      if (e.bits != bits) e = Entry{bits, s.Index(magnitude)};
      return e.index;
    }

   private:
    static constexpr int kSlotBits = 13;
    struct Entry {
      uint64_t bits = 0;
      int32_t index = 0;
    };
    std::unique_ptr<Entry[]> entries_ = std::make_unique<Entry[]>(size_t{1} << kSlotBits);
  };
  // Add, with the bucket index read through memo (made for this state's config).
  bool AddMemo(const Value* args, IndexMemo* memo) {
    return AddWith(args, [this, memo](double m) { return memo->IndexOf(m, *this); });
  }

  Status Merge(const MeasureState& other) override;
  // Encoding: varint skipped, varint zero count, negative store, positive
  // store (DDSketchStore::Encode), then iff any value: f64 min, f64 max.
  void Encode(ByteWriter& w) const override;
  Status Decode(ByteReader& r) override;
  Status MergeEncoded(ByteReader& r, bool apply, MeasureState* scratch) override;
  // Prefetches the buckets an encoded state's counts add to.
  void PrefetchMerge(std::string_view encoded) const override;
  // One Float per probability, in config order; all Null when empty.
  void Finalize(std::vector<Cell>* out) const override;
  uint64_t skipped() const override { return skipped_; }

  // The estimate for probability p as documented above. REQUIRES count() > 0.
  double Quantile(double p) const;
  uint64_t count() const { return neg_.total() + zero_ + pos_.total(); }
  double alpha() const { return alpha_; }

 private:
  // Add, with the bucket index of a magnitude from index_of.
  template <class IndexOf>
  bool AddWith(const Value* args, IndexOf index_of) {
    double x;
    if (!args[0].AsNumber(&x) || !std::isfinite(x)) {
      ++skipped_;
      return true;
    }
    if (x > 0) {
      pos_.Add(index_of(x));
    } else if (x < 0) {
      neg_.Add(index_of(-x));
    } else {
      x = 0.0;  // -0.0 too: one zero, so min/max are canonical
      ++zero_;
    }
    if (!(x >= min_)) min_ = x;  // also true while empty (min_ is NaN)
    if (!(x <= max_)) max_ = x;
    return true;
  }
  // An encoded state, checked, its stores left in the input.
  struct Encoded {
    uint64_t skipped = 0, zero = 0;
    DDSketchStore::EncodedRun neg, pos;
    double min = NAN, max = NAN;
  };
  static Status ReadEncoded(ByteReader& r, Encoded* out);
  // Folds the counts-free part (zero count, skipped, min and max) of a
  // later state in, as Merge does.
  void MergeScalars(uint64_t zero, uint64_t skipped, uint64_t count, double min, double max);

  int32_t Index(double magnitude) const {
    double i = std::ceil(std::log(magnitude) * inv_log_gamma_);
    i = std::fmin(std::fmax(i, DDSketchStore::kMinIndex), DDSketchStore::kMaxIndex);
    return static_cast<int32_t>(i);
  }
  double BucketEstimate(int32_t i) const { return std::exp(i * log_gamma_) * estimate_factor_; }
  // Estimate of the order statistic of 0-based rank r, clamped to [min, max].
  double RankEstimate(uint64_t r) const;

  // What a merge touches comes first, so that it shares as few cache lines
  // as it can (the coordinator merges millions of states, most not cached).
  DDSketchStore neg_;  // buckets of -x for x < 0
  DDSketchStore pos_;
  uint64_t zero_ = 0;
  uint64_t skipped_ = 0;
  double min_ = NAN;  // NaN iff count() == 0
  double max_ = NAN;
  std::vector<double> probabilities_;
  double alpha_;
  double log_gamma_;
  double inv_log_gamma_;
  double estimate_factor_;  // 2/(gamma+1)
};

}  // namespace fanfold
