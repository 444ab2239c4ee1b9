// ScratchArena: bump allocator for strings made while evaluating one record
// (lower-cased text, substrings, time-bucket labels). Blocks are kept across
// Reset(), so after warm-up evaluating a record allocates nothing. Pointers
// stay valid until the next Reset(). Single-threaded: one arena per evaluator.
#pragma once

#include <cstddef>
#include <cstdint>
#include <cstring>
#include <memory>
#include <string_view>
#include <vector>

namespace fanfold {

class ScratchArena {
 public:
  static constexpr size_t kBlockSize = 64 * 1024;

  // Returns n writable bytes, valid until Reset(). The common case (room
  // in the current block) is a bump of two fields, inlined at the caller.
  char* Allocate(size_t n) {
    if (current_ != kNone && n <= kBlockSize - used_) {
      char* p = block_ + used_;
      used_ += n;
      return p;
    }
    return AllocateSlow(n);
  }

  std::string_view Copy(std::string_view s) {
    const size_t n = s.size();
    if (n == 0) return {};
    char* p = Allocate(n);
    // Short strings (ids, names, timestamps) without a call to memcpy: two
    // overlapping moves of 4, 8 or 16 bytes cover 4..32 bytes, reading
    // only s's bytes.
    if (n >= 8 && n <= 16) {
      uint64_t head, tail;
      std::memcpy(&head, s.data(), 8);
      std::memcpy(&tail, s.data() + n - 8, 8);
      std::memcpy(p, &head, 8);
      std::memcpy(p + n - 8, &tail, 8);
    } else if (n >= 4 && n < 8) {
      uint32_t head, tail;
      std::memcpy(&head, s.data(), 4);
      std::memcpy(&tail, s.data() + n - 4, 4);
      std::memcpy(p, &head, 4);
      std::memcpy(p + n - 4, &tail, 4);
    } else if (n > 16 && n <= 32) {
      char head[16], tail[16];
      std::memcpy(head, s.data(), 16);
      std::memcpy(tail, s.data() + n - 16, 16);
      std::memcpy(p, head, 16);
      std::memcpy(p + n - 16, tail, 16);
    } else {
      std::memcpy(p, s.data(), n);
    }
    return {p, n};
  }

  void Reset() {
    current_ = blocks_.empty() ? kNone : 0;
    block_ = blocks_.empty() ? nullptr : blocks_[0].get();
    used_ = 0;
    big_.clear();
  }

 private:
  // A new block (or an oversized allocation of its own, freed at Reset()).
  [[gnu::noinline]] char* AllocateSlow(size_t n) {
    if (n > kBlockSize) {
      big_.push_back(std::make_unique<char[]>(n));
      return big_.back().get();
    }
    current_ = current_ == kNone ? 0 : current_ + 1;
    if (current_ >= blocks_.size()) blocks_.push_back(std::make_unique<char[]>(kBlockSize));
    block_ = blocks_[current_].get();
    used_ = n;
    return block_;
  }

  std::vector<std::unique_ptr<char[]>> blocks_;
  std::vector<std::unique_ptr<char[]>> big_;
  static constexpr size_t kNone = static_cast<size_t>(-1);
  size_t current_ = kNone;  // index of the block in use
  char* block_ = nullptr;   // blocks_[current_]
  size_t used_ = 0;         // bytes used in blocks_[current_]
};

}  // namespace fanfold
