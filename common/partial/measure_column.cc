#include "common/partial/measure_column.h"

#include <algorithm>
#include <cstdlib>
#include <memory>
#include <type_traits>
#include <vector>

#include "common/partial/chunked_array.h"

#include "common/measures/extreme.h"
#include "common/measures/moments.h"
#include "common/measures/sketches/ddsketch.h"
#include "common/measures/sketches/hyperloglog.h"
#include "common/measures/sum.h"

namespace fanfold {
namespace {

// Calls add(group, args) for each input of a batch whose arguments lie
// contiguously (AddBatch), in order; returns n, or the index of the first
// input add refused.
template <class Add>
size_t EachContiguous(const uint32_t* groups, const Value* args, size_t stride, size_t n, Add add) {
  for (size_t i = 0; i < n; ++i)
    if (!add(groups[i], args + i * stride)) return i;
  return n;
}

// The same for inputs whose arguments are read in place (AddRows): one
// argument is passed where it lies; two are copied side by side first.
template <class Add>
size_t EachInPlace(const uint32_t* groups, const uint32_t* rows, const ArgColumns& c, size_t n, Add add) {
  if (c.count <= 1) {
    const Value* base = c.count == 0 ? nullptr : c.base[0];
    const size_t step = c.count == 0 ? 0 : c.step[0];
    for (size_t i = 0; i < n; ++i)
      if (!add(groups[i], base + rows[i] * step)) return i;
    return n;
  }
  Value two[2];
  for (size_t i = 0; i < n; ++i) {
    two[0] = c.base[0][rows[i] * c.step[0]];
    two[1] = c.base[1][rows[i] * c.step[1]];
    if (!add(groups[i], two)) return i;
  }
  return n;
}

// Writes each group's state with encode(group, at) -> end, one after
// another from out, and its end's offset in ends; the groups come in key
// order, scattered in memory: prefetch(group) fetches a state a few ahead.
template <class Encode, class Prefetch>
void EachInRange(const uint32_t* groups, size_t n, char* out, uint32_t* ends, Encode encode, Prefetch prefetch) {
  constexpr size_t kAhead = 8;
  for (size_t i = 0; i < n && i < kAhead; ++i) prefetch(groups[i]);
  char* p = out;
  for (size_t i = 0; i < n; ++i) {
    if (i + kAhead < n) prefetch(groups[i + kAhead]);
    p = encode(groups[i], p);
    ends[i] = static_cast<uint32_t>(p - out);
  }
}

// count and count_present: one integer per group, encoded as CountState
// encodes it (varint n).
class CountColumn final : public MeasureColumn {
 public:
  explicit CountColumn(bool present_only) : present_only_(present_only) {}
  void Resize(size_t groups) override { n_.Resize(groups, 0); }
  void Clear() override { n_.Clear(); }
  size_t AddBatch(const uint32_t* groups, const Value* args, size_t stride, size_t n) override {
    if (!present_only_) return CountAll(groups, n);
    return EachContiguous(groups, args, stride, n, [this](uint32_t g, const Value* a) { return Add(g, a); });
  }
  size_t AddRows(const uint32_t* groups, const uint32_t* rows, const ArgColumns& args, size_t n) override {
    if (!present_only_) return CountAll(groups, n);
    return EachInPlace(groups, rows, args, n, [this](uint32_t g, const Value* a) { return Add(g, a); });
  }
  void EncodeGroup(uint32_t g, ByteWriter& w) const override { w.Varint(n_[g]); }
  size_t EncodeBound() const override { return kMaxVarintBytes; }
  void EncodeRangeTo(const uint32_t* groups, size_t n, char* out, uint32_t* ends) const override {
    EachInRange(groups, n, out, ends, [this](uint32_t g, char* p) { return PutVarint(p, n_[g]); },
                [this](uint32_t g) { __builtin_prefetch(&n_[g]); });
  }
  size_t EncodedStateBytes(size_t groups) const override {
    size_t bytes = 0;
    for (size_t g = 0; g < groups; ++g) bytes += VarintBytes(n_[g]);
    return bytes;
  }
  void Prefetch(uint32_t g) const override { __builtin_prefetch(&n_[g]); }
  size_t ApproxBytes() const override { return n_.bytes(); }
  size_t StableBytesUpTo() const override { return n_.SameBytesUpTo(); }

 private:
  size_t CountAll(const uint32_t* groups, size_t n) {
    for (size_t i = 0; i < n; ++i) ++n_[groups[i]];
    return n;
  }
  bool Add(uint32_t g, const Value* a) {
    n_[g] += a[0].is_present() ? 1 : 0;
    return true;
  }
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
  void Clear() override { states_.Clear(); }
  size_t AddBatch(const uint32_t* groups, const Value* args, size_t stride, size_t n) override {
    return EachContiguous(groups, args, stride, n, [this](uint32_t g, const Value* a) { return states_[g].State::Add(a); });
  }
  size_t AddRows(const uint32_t* groups, const uint32_t* rows, const ArgColumns& args, size_t n) override {
    return EachInPlace(groups, rows, args, n, [this](uint32_t g, const Value* a) { return states_[g].State::Add(a); });
  }
  void EncodeGroup(uint32_t g, ByteWriter& w) const override { states_[g].State::Encode(w); }
  // The states with a bounded encoding written by pointer (sum's EncodeTo).
  static constexpr bool kBounded = requires(const State& s, char* p) { s.EncodeTo(p); };
  size_t EncodeBound() const override {
    if constexpr (kBounded) return State::kMaxEncodedBytes;
    return 0;
  }
  void EncodeRangeTo(const uint32_t* groups, size_t n, char* out, uint32_t* ends) const override {
    if constexpr (kBounded)
      EachInRange(groups, n, out, ends, [this](uint32_t g, char* p) { return states_[g].EncodeTo(p); },
                  [this](uint32_t g) { __builtin_prefetch(&states_[g]); });
    else
      MeasureColumn::EncodeRangeTo(groups, n, out, ends);
  }
  void Prefetch(uint32_t g) const override { __builtin_prefetch(&states_[g]); }
  size_t ApproxBytes() const override { return states_.bytes(); }
  size_t StableBytesUpTo() const override { return states_.SameBytesUpTo(); }

 private:
  State empty_;
  ChunkedArray<State> states_;
};

// Every other measure: one MeasureState per group (their states own
// variable-size data: kept values, registers, buckets, counters). State is
// the states' final class when the column knows it (the sketches: their
// Add is then called directly, inlined), else MeasureState (a virtual call
// per input).
template <class State>
class ObjectColumn final : public MeasureColumn {
 public:
  explicit ObjectColumn(const MeasureConfig& config) : config_(config) {}
  void Resize(size_t groups) override {
    while (states_.size() < groups) {
      std::unique_ptr<MeasureState> s = NewMeasureState(config_);
      // The registry makes State for this kind (a mismatch is a bug: caught here, not by a bad cast).
      if (dynamic_cast<State*>(s.get()) == nullptr) std::abort();
      states_.Push(std::move(s));
    }
  }
  void Clear() override { states_.Clear(); }
  size_t AddBatch(const uint32_t* groups, const Value* args, size_t stride, size_t n) override {
    Taking(n);
    return EachContiguous(groups, args, stride, n, [this](uint32_t g, const Value* a) { return Add(g, a); });
  }
  size_t AddRows(const uint32_t* groups, const uint32_t* rows, const ArgColumns& args, size_t n) override {
    Taking(n);
    return EachInPlace(groups, rows, args, n, [this](uint32_t g, const Value* a) { return Add(g, a); });
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
  bool Add(uint32_t g, const Value* a) {
    if constexpr (std::is_same_v<State, MeasureState>) {
      return states_[g]->Add(a);
    } else if constexpr (std::is_same_v<State, DDSketchState>) {
      DDSketchState* s = static_cast<DDSketchState*>(states_[g].get());
      return memo_ ? s->AddMemo(a, memo_.get()) : s->DDSketchState::Add(a);
    } else {
      return static_cast<State*>(states_[g].get())->State::Add(a);
    }
  }
  // ddsketch: past its first kMemoAfter inputs the column reads bucket
  // indexes through a memo (the same indexes; made late so that a tiny
  // shard does not pay for the table).
  void Taking(size_t n) {
    if constexpr (std::is_same_v<State, DDSketchState>) {
      if (!memo_ && (taken_ += n) > kMemoAfter) memo_ = std::make_unique<DDSketchState::IndexMemo>();
    }
  }
  const MeasureConfig& config_;
  ChunkedArray<std::unique_ptr<MeasureState>> states_;
  // ddsketch only: the inputs taken until the memo is made, and the memo.
  static constexpr size_t kMemoAfter = 4096;
  size_t taken_ = 0;
  std::unique_ptr<DDSketchState::IndexMemo> memo_;
};

}  // namespace

size_t MeasureColumn::EncodedStateBytes(size_t groups) const {
  // The states written a block at a time into a scratch, and measured.
  constexpr size_t kBlock = 256;
  std::vector<uint32_t> ids(kBlock);
  std::vector<uint32_t> ends(kBlock);
  std::vector<char> scratch(kBlock * EncodeBound());
  size_t bytes = 0;
  for (size_t b = 0; b < groups; b += kBlock) {
    const size_t k = std::min(kBlock, groups - b);
    for (size_t i = 0; i < k; ++i) ids[i] = static_cast<uint32_t>(b + i);
    EncodeRangeTo(ids.data(), k, scratch.data(), ends.data());
    bytes += ends[k - 1];
  }
  return bytes;
}

void MeasureColumn::EncodeRangeTo(const uint32_t* groups, size_t n, char* out, uint32_t* ends) const {
  // Only a column with an EncodeBound has a writer by pointer; the table
  // asks EncodeBound first, so reaching here is a bug, caught here.
  (void)groups, (void)n, (void)out, (void)ends;
  std::abort();
}

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
    case MeasureKind::kHyperLogLog: return std::make_unique<ObjectColumn<HyperLogLogState>>(config);
    case MeasureKind::kDdSketch: return std::make_unique<ObjectColumn<DDSketchState>>(config);
    default: return std::make_unique<ObjectColumn<MeasureState>>(config);
  }
}

}  // namespace fanfold
