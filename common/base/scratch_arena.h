// ScratchArena: bump allocator for strings made while evaluating one record
// (lower-cased text, substrings, time-bucket labels). Blocks are kept across
// Reset(), so after warm-up evaluating a record allocates nothing. Pointers
// stay valid until the next Reset(). Single-threaded: one arena per evaluator.
#pragma once

#include <cstddef>
#include <cstring>
#include <memory>
#include <string_view>
#include <vector>

namespace fanfold {

class ScratchArena {
 public:
  static constexpr size_t kBlockSize = 64 * 1024;

  // Returns n writable bytes, valid until Reset().
  char* Allocate(size_t n) {
    if (n > kBlockSize) {  // oversized: a block of its own, freed at Reset()
      big_.push_back(std::make_unique<char[]>(n));
      return big_.back().get();
    }
    if (current_ == kNone || used_ + n > kBlockSize) {
      current_ = current_ == kNone ? 0 : current_ + 1;
      if (current_ >= blocks_.size()) blocks_.push_back(std::make_unique<char[]>(kBlockSize));
      used_ = 0;
    }
    char* p = blocks_[current_].get() + used_;
    used_ += n;
    return p;
  }

  std::string_view Copy(std::string_view s) {
    if (s.empty()) return {};
    char* p = Allocate(s.size());
    std::memcpy(p, s.data(), s.size());
    return {p, s.size()};
  }

  void Reset() {
    current_ = blocks_.empty() ? kNone : 0;
    used_ = 0;
    big_.clear();
  }

 private:
  std::vector<std::unique_ptr<char[]>> blocks_;
  std::vector<std::unique_ptr<char[]>> big_;
  static constexpr size_t kNone = static_cast<size_t>(-1);
  size_t current_ = kNone;  // index of the block in use
  size_t used_ = 0;         // bytes used in blocks_[current_]
};

}  // namespace fanfold
