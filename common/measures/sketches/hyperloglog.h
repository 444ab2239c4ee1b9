// HyperLogLogState: the state of `hyperloglog`, a HyperLogLog sketch
// (Flajolet, Fusy, Gandouet & Meunier 2007) with m = 2^precision one-byte
// registers over a 64-bit hash (XXH3 of the value's ValueKey), so no
// large-range correction is needed (Heule, Nunkesser & Hall 2013). Relative
// standard error about 1.04/sqrt(m): 1.6% at the default precision 12.
// Merge is register-wise max: exact and order-independent. A state with
// few non-zero registers keeps them as a short list (4 bytes each, at most
// min(64, m/4) of them) and only then switches to the 2^p-byte array, so a
// group that saw a handful of values costs bytes, not kilobytes; both forms
// encode alike. Single-threaded.
#pragma once

#include <algorithm>
#include <cstdint>
#include <vector>

#include "common/measures/measure.h"
#include "common/base/value_key.h"

namespace fanfold {

class HyperLogLogState final : public MeasureState {
 public:
  // Uses config.precision (REQUIRES 4..18; clamped there).
  explicit HyperLogLogState(const MeasureConfig& config);

  bool Add(const Value* args) override {
    if (!IsCountable(args[0])) {
      ++skipped_;
      return true;
    }
    InsertHash(HashValueKey(args[0]));
    return true;
  }
  Status Merge(const MeasureState& other) override;
  // Encoding: varint skipped, u8 form, then
  //   form 0 (dense):  m bytes, one register each;
  //   form 1 (sparse): varint k, k x (varint index gap, u8 register) for the
  //                    non-zero registers in index order (gap from the
  //                    previous index + 1, the first from 0).
  // Sparse iff 4k < m, so every state has exactly one encoding.
  void Encode(ByteWriter& w) const override;
  Status Decode(ByteReader& r) override;
  Status MergeEncoded(ByteReader& r, bool apply, MeasureState* scratch) override;
  // Prefetches the registers a sparse encoded state raises (all of them for
  // a dense one).
  void PrefetchMerge(std::string_view encoded) const override;
  // Int(round(Estimate())).
  void Finalize(std::vector<Cell>* out) const override;
  uint64_t skipped() const override { return skipped_; }

  // Updates the register the hash selects: its top `precision` bits pick
  // the register, the rest give the rank (position of the first 1 bit).
  void InsertHash(uint64_t hash) {
    const uint64_t w = (hash << p_) | (uint64_t{1} << (p_ - 1));  // never 0
    Raise(static_cast<uint32_t>(hash >> (64 - p_)), static_cast<uint8_t>(__builtin_clzll(w) + 1));
  }
  // The cardinality estimate: linear counting m ln(m/V) while it is below
  // the threshold for this precision (Heule et al. 2013) and V > 0 registers
  // are empty; the raw HyperLogLog estimate otherwise. See docs/measures.md.
  double Estimate() const;
  int precision() const { return p_; }

 private:
  // Register `index` becomes max(itself, rank).
  void Raise(uint32_t index, uint8_t rank) {
    if (!registers_.empty()) {
      uint8_t& reg = registers_[index];
      if (rank > reg) reg = rank;
      return;
    }
    // The list is sorted, and an entry of `index` is the first not below
    // index << 8 (its rank is at least 1): a binary search, not a scan of
    // up to 64 entries per value.
    const auto it = std::lower_bound(sparse_.begin(), sparse_.end(), index << 8);
    if (it != sparse_.end() && (*it >> 8) == index) {
      if (rank > (*it & 0xff)) *it = index << 8 | rank;
      return;
    }
    if (sparse_.size() < SparseLimit()) {
      sparse_.insert(it, index << 8 | rank);
      return;
    }
    Densify();
    registers_[index] = rank;  // it was zero: the index was not in the list
  }
  size_t SparseLimit() const { return std::min<size_t>(64, (size_t{1} << p_) / 4); }
  // Moves the list into a full register array.
  void Densify();
  // Encoded states with at most this many sparse registers merge in one pass.
  static constexpr size_t kFastSparse = 64;
  // Reads a sparse register list of at most kFastSparse entries (the bytes
  // after `skipped`) into out as index << 8 | rank, checked as Decode
  // checks. Returns the count (r advanced), -1 if the state is not such a
  // list (r unchanged), -2 if the bytes are bad.
  int ReadShortSparse(ByteReader& r, uint32_t* out) const;
  // Raises the registers of an ascending list of index << 8 | rank.
  void RaiseSorted(const uint32_t* entries, size_t k);
  // The registers in index order, whichever form holds them.
  std::vector<uint8_t> DenseCopy() const;

  int p_;
  uint64_t skipped_ = 0;
  // Exactly one of these holds the non-zero registers (both empty: all zero):
  std::vector<uint32_t> sparse_;    // index << 8 | rank, ascending
  std::vector<uint8_t> registers_;  // empty or 2^p_ bytes
};

}  // namespace fanfold
