// ChunkedArray<T>: a growable array indexed by group id, in chunks of 4,096
// elements. Past the first chunk, growing never copies what is there and
// never holds an old and a new buffer at once (a vector's doubling does
// both: with a million groups its peak is 1.5x to 3x the states). The first
// chunk grows as a vector does, so that a table of a few groups (a tiny
// shard) allocates a few elements, not 4,096. Not thread-safe.
#pragma once

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
      chunks_.emplace_back();
      if (size_ > 0) chunks_.back().reserve(kChunk);
    }
    chunks_.back().push_back(std::move(x));
    ++size_;
  }
  T& operator[](size_t i) { return chunks_[i >> kChunkBits][i & (kChunk - 1)]; }
  const T& operator[](size_t i) const { return chunks_[i >> kChunkBits][i & (kChunk - 1)]; }
  // Bytes of the chunks (not of what elements own): the first chunk's
  // capacity while it is the only one, else a full chunk each.
  size_t bytes() const {
    if (chunks_.size() <= 1) return chunks_.empty() ? 0 : chunks_[0].capacity() * sizeof(T);
    return chunks_.size() * kChunk * sizeof(T);
  }
  // The size up to which growing the array leaves bytes() unchanged.
  size_t SameBytesUpTo() const {
    if (chunks_.size() <= 1) return chunks_.empty() ? 0 : chunks_[0].capacity();
    return chunks_.size() * kChunk;
  }

 private:
  std::vector<std::vector<T>> chunks_;
  size_t size_ = 0;
};

}  // namespace fanfold
