// ChunkedArray<T>: a growable array indexed by group id, in chunks of 4,096
// elements. Past the first chunk, growing never copies what is there and
// never holds an old and a new buffer at once (a vector's doubling does
// both: with a million groups its peak is 1.5x to 3x the states). The first
// chunk grows as a vector does (doubling from one element), so that a table
// of a few groups (a tiny shard) allocates a few elements, not 4,096.
// Clear destroys the elements but keeps the chunks' memory for the next
// shard's groups; bytes() still counts what an array grown from empty
// would hold, so a budget treats a cleared array as a new one. Not
// thread-safe.
#pragma once

#include <algorithm>
#include <cstddef>
#include <utility>
#include <vector>

namespace fanfold {

template <class T>
class ChunkedArray {
 public:
  static constexpr size_t kChunkBits = 12;
  static constexpr size_t kChunk = size_t{1} << kChunkBits;

  size_t size() const { return size_; }
  // Appends copies of `fill` until the array holds n elements.
  void Resize(size_t n, const T& fill) {
    while (size_ < n) Push(T(fill));
  }
  void Push(T&& x) {
    if ((size_ & (kChunk - 1)) == 0) {
      if (used_ == chunks_.size()) chunks_.emplace_back();
      if (size_ > 0) chunks_[used_].reserve(kChunk);
      ++used_;
    }
    if (size_ < kChunk && size_ == first_capacity_) {  // the first chunk doubles
      first_capacity_ = std::max<size_t>(1, 2 * first_capacity_);
      chunks_[0].reserve(first_capacity_);
    }
    chunks_[used_ - 1].push_back(std::move(x));
    ++size_;
  }
  T& operator[](size_t i) { return chunks_[i >> kChunkBits][i & (kChunk - 1)]; }
  const T& operator[](size_t i) const { return chunks_[i >> kChunkBits][i & (kChunk - 1)]; }
  // No elements; the chunks' memory is kept.
  void Clear() {
    for (size_t c = 0; c < used_; ++c) chunks_[c].clear();
    size_ = 0;
    used_ = 0;
    first_capacity_ = 0;
  }
  // Bytes of the chunks an array grown from empty to this size holds (not
  // what elements own): the first chunk's capacity while it is the only
  // one, else a full chunk each.
  size_t bytes() const {
    if (used_ <= 1) return first_capacity_ * sizeof(T);
    return used_ * kChunk * sizeof(T);
  }
  // The size up to which growing the array leaves bytes() unchanged.
  size_t SameBytesUpTo() const {
    if (used_ <= 1) return first_capacity_;
    return used_ * kChunk;
  }

 private:
  std::vector<std::vector<T>> chunks_;  // [0, used_) in use, the rest kept
  size_t used_ = 0;
  size_t size_ = 0;
  size_t first_capacity_ = 0;  // the first chunk's, as if grown from empty
};

}  // namespace fanfold
