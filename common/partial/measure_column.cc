#include "common/partial/measure_column.h"

#include <vector>

#include "common/partial/chunked_array.h"

#include "common/measures/extreme.h"
#include "common/measures/moments.h"
#include "common/measures/sum.h"

namespace fanfold {
namespace {

// count and count_present: one integer per group, encoded as CountState
// encodes it (varint n).
class CountColumn final : public MeasureColumn {
 public:
  explicit CountColumn(bool present_only) : present_only_(present_only) {}
  void Resize(size_t groups) override { n_.Resize(groups, 0); }
  size_t AddBatch(const uint32_t* groups, const Value* args, size_t stride, size_t n) override {
    if (present_only_) {
      for (size_t i = 0; i < n; ++i) n_[groups[i]] += args[i * stride].is_present() ? 1 : 0;
    } else {
      for (size_t i = 0; i < n; ++i) ++n_[groups[i]];
    }
    return n;
  }
  void EncodeGroup(uint32_t g, ByteWriter& w) const override { w.Varint(n_[g]); }
  void Prefetch(uint32_t g) const override { __builtin_prefetch(&n_[g]); }
  size_t ApproxBytes() const override { return n_.bytes(); }
  size_t StableBytesUpTo() const override { return n_.SameBytesUpTo(); }

 private:
  bool present_only_;
  ChunkedArray<uint64_t> n_;
};

// sum, mean/variance/stddev, min, max: the measure's own final state class,
// held by value in one array. Calls on the final class are direct (no
// virtual dispatch); its Add and Encode are the very code GroupTable runs.
template <class State>
class StateColumn final : public MeasureColumn {
 public:
  explicit StateColumn(const State& empty) : empty_(empty) {}
  void Resize(size_t groups) override { states_.Resize(groups, empty_); }
  size_t AddBatch(const uint32_t* groups, const Value* args, size_t stride, size_t n) override {
    for (size_t i = 0; i < n; ++i)
      if (!states_[groups[i]].State::Add(args + i * stride)) return i;
    return n;
  }
  void EncodeGroup(uint32_t g, ByteWriter& w) const override { states_[g].State::Encode(w); }
  void Prefetch(uint32_t g) const override { __builtin_prefetch(&states_[g]); }
  size_t ApproxBytes() const override { return states_.bytes(); }
  size_t StableBytesUpTo() const override { return states_.SameBytesUpTo(); }

 private:
  State empty_;
  ChunkedArray<State> states_;
};

// Every other measure: one MeasureState per group (their states own
// variable-size data: kept values, registers, buckets, counters).
class ObjectColumn final : public MeasureColumn {
 public:
  explicit ObjectColumn(const MeasureConfig& config) : config_(config) {}
  void Resize(size_t groups) override {
    while (states_.size() < groups) states_.Push(NewMeasureState(config_));
  }
  size_t AddBatch(const uint32_t* groups, const Value* args, size_t stride, size_t n) override {
    for (size_t i = 0; i < n; ++i)
      if (!states_[groups[i]]->Add(args + i * stride)) return i;
    return n;
  }
  void EncodeGroup(uint32_t g, ByteWriter& w) const override { states_[g]->Encode(w); }
  // The pointers, and per state an estimate of its object and allocation
  // (what it owns beyond, kept values or registers, is bounded by the
  // measure's own limit or precision, not counted).
  size_t ApproxBytes() const override { return states_.bytes() + states_.size() * kObjectBytes; }
  size_t StableBytesUpTo() const override { return states_.SameBytesUpTo(); }
  size_t BytesPerGroup() const override { return kObjectBytes; }
  static constexpr size_t kObjectBytes = 96;

 private:
  const MeasureConfig& config_;
  ChunkedArray<std::unique_ptr<MeasureState>> states_;
};

}  // namespace

std::unique_ptr<MeasureColumn> NewMeasureColumn(const MeasureConfig& config) {
  switch (config.kind) {
    case MeasureKind::kCount: return std::make_unique<CountColumn>(false);
    case MeasureKind::kCountPresent: return std::make_unique<CountColumn>(true);
    case MeasureKind::kSum: return std::make_unique<StateColumn<SumState>>(SumState());
    case MeasureKind::kMean:
    case MeasureKind::kVariance:
    case MeasureKind::kStddev: return std::make_unique<StateColumn<MomentsState>>(MomentsState(config.kind));
    case MeasureKind::kMin: return std::make_unique<StateColumn<ExtremeState>>(ExtremeState(false));
    case MeasureKind::kMax: return std::make_unique<StateColumn<ExtremeState>>(ExtremeState(true));
    default: return std::make_unique<ObjectColumn>(config);
  }
}

}  // namespace fanfold
