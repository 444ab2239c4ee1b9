// KeyArena: the bytes of a group table's keys, stored once, in chunks that
// never move, so a key's string_view stays valid for the arena's lifetime
// (moving the arena keeps them valid too). One allocation per chunk of keys
// (4 KiB, doubling to 64 KiB; or per key longer than that) instead of one
// or two per group. Clear forgets the keys but keeps the chunks, which the
// next keys fill again (a worker's table kept across shards). Owned by its
// group table; not thread-safe.
#pragma once

#include <algorithm>
#include <cstring>
#include <memory>
#include <string_view>
#include <vector>

namespace fanfold {

class KeyArena {
 public:
  // Copies key into the arena; the view stays valid until the arena dies
  // or is cleared.
  std::string_view Add(std::string_view key) {
    if (key.size() > room_) NextChunk(key.size());
    char* at = next_;
    if (!key.empty()) std::memcpy(at, key.data(), key.size());
    next_ += key.size();
    room_ -= key.size();
    return std::string_view(at, key.size());
  }

  // Forgets every key (their views dangle); keeps the chunks for the next.
  void Clear() {
    used_ = 0;
    next_ = nullptr;
    room_ = 0;
  }

 private:
  struct Chunk {
    std::unique_ptr<char[]> bytes;
    size_t size;
  };
  // Moves to the next kept chunk, or a new one, with room for `need` bytes.
  void NextChunk(size_t need) {
    while (used_ < chunks_.size() && chunks_[used_].size < need) ++used_;  // a kept chunk too small: skipped
    if (used_ == chunks_.size()) {
      // Chunks double from 4 KiB to 64 KiB (a tiny shard's table needs
      // one small one), and are not zeroed: every byte is written before
      // it is read.
      next_chunk_ = std::min(kMaxChunkBytes, next_chunk_ * 2);
      const size_t size = std::max(next_chunk_, need);
      chunks_.push_back({std::make_unique_for_overwrite<char[]>(size), size});
    }
    next_ = chunks_[used_].bytes.get();
    room_ = chunks_[used_].size;
    ++used_;
  }

  static constexpr size_t kMaxChunkBytes = size_t{1} << 16;
  size_t next_chunk_ = size_t{1} << 11;  // doubled before each new chunk
  std::vector<Chunk> chunks_;
  size_t used_ = 0;  // chunks_[0, used_) hold keys
  char* next_ = nullptr;
  size_t room_ = 0;
};

}  // namespace fanfold
