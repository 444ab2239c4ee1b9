// KeyArena: the bytes of a group table's keys, stored once, in chunks that
// never move, so a key's string_view stays valid for the arena's lifetime
// (moving the arena keeps them valid too). One allocation per chunk of keys
// (4 KiB, doubling to 64 KiB; or per key longer than that) instead of one
// or two per group. Owned by
// its GroupTable; not thread-safe.
#pragma once

#include <algorithm>
#include <cstring>
#include <memory>
#include <string_view>
#include <vector>

namespace fanfold {

class KeyArena {
 public:
  // Copies key into the arena; the view stays valid until the arena dies.
  std::string_view Add(std::string_view key) {
    if (key.size() > room_) {
      // Chunks double from 4 KiB to 64 KiB (a tiny shard's table needs
      // one small one), and are not zeroed: every byte is written before
      // it is read.
      next_chunk_ = std::min(kMaxChunkBytes, next_chunk_ * 2);
      const size_t size = std::max(next_chunk_, key.size());
      chunks_.push_back(std::make_unique_for_overwrite<char[]>(size));
      next_ = chunks_.back().get();
      room_ = size;
    }
    char* at = next_;
    if (!key.empty()) std::memcpy(at, key.data(), key.size());
    next_ += key.size();
    room_ -= key.size();
    return std::string_view(at, key.size());
  }

 private:
  static constexpr size_t kMaxChunkBytes = size_t{1} << 16;
  size_t next_chunk_ = size_t{1} << 11;  // doubled before each new chunk
  std::vector<std::unique_ptr<char[]>> chunks_;
  char* next_ = nullptr;
  size_t room_ = 0;
};

}  // namespace fanfold
