// CountState: the state of `count` (records in the group) and
// `count_present` (records whose argument is present, i.e. neither missing
// nor null). One integer; merge adds. Single-threaded, like every state.
#pragma once

#include "common/measures/measure.h"
#include "common/measures/same_state_merge.h"

namespace fanfold {

class CountState final : public SameStateMerge<CountState> {
 public:
  static constexpr const char* kLabel = "count";

  // present_only: true for kCountPresent (one argument), false for kCount.
  explicit CountState(bool present_only) : present_only_(present_only) {}

  bool Add(const Value* args) override {
    // A branch rather than two classes: the flag is loop-invariant, so the
    // predictor makes this free, and one class keeps encode/decode single.
    if (!present_only_ || args[0].is_present()) ++n_;
    return true;
  }
  // Encoding: varint n.
  void Encode(ByteWriter& w) const override;
  Status Decode(ByteReader& r) override;
  void Finalize(std::vector<Cell>* out) const override;
  // Count measures use every argument: a missing value is simply not counted.
  uint64_t skipped() const override { return 0; }

  uint64_t n() const { return n_; }

 private:
  friend class SameStateMerge<CountState>;
  CountState EmptyLike() const { return CountState(present_only_); }
  bool SameConfig(const CountState& o) const { return o.present_only_ == present_only_; }
  void MergeSame(const CountState& o) { n_ += o.n_; }

  bool present_only_;
  uint64_t n_ = 0;
};

}  // namespace fanfold
