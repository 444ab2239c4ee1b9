// KeyOrder: the order in which a group table encodes its groups — by key
// bytes, ascending (unsigned, a shorter key before every longer one it
// prefixes). Keys are compared 8 bytes at a time as big-endian integers,
// and only keys equal so far go on to their next 8 bytes: keys of one
// shard often share a long prefix (a tag, a length, "2026-03-01T"), which a
// byte-wise compare would read again at every comparison. Pure function;
// thread-safe. KeyOrderStretches gives the same order a stretch at a time
// (a worker's encoder writes, and has compressed, the first groups while the
// rest are still being sorted).
#pragma once

#include <cstddef>
#include <cstdint>
#include <string_view>
#include <vector>

namespace fanfold {

// The indexes of keys, sorted by the key each names. REQUIRES: keys are
// distinct (equal keys would come out in an unspecified order).
std::vector<uint32_t> KeyOrder(const std::vector<std::string_view>& keys);

// KeyOrder(keys), sorted a stretch at a time: a large table's keys are first
// dealt into buckets by their first two bytes past the shared prefix, and
// each Next sorts the next buckets. Not thread-safe; keys must outlive it.
class KeyOrderStretches {
 public:
  explicit KeyOrderStretches(const std::vector<std::string_view>& keys);
  // Sorts the next stretch (at least one key); false when all are sorted.
  bool Next();
  // Sorts up to at least n keys (or all).
  void SortAtLeast(size_t n) {
    while (sorted_ < n && Next()) {
    }
  }
  // ids()[0, sorted()) are the first sorted() entries of KeyOrder(keys).
  const std::vector<uint32_t>& ids() const { return ids_; }
  size_t sorted() const { return sorted_; }
  std::vector<uint32_t> TakeIds() { return std::move(ids_); }

  struct Entry {
    uint64_t window = 0;  // 8 key bytes at the current offset, big-endian
    uint32_t group = 0;
  };

 private:
  const std::vector<std::string_view>& keys_;
  size_t offset_ = 0;                 // bytes every key shares
  std::vector<Entry> entries_;        // dealt into buckets (or whole)
  std::vector<uint32_t> bucket_ends_; // each bucket's end in entries_
  size_t next_bucket_ = 0;
  std::vector<uint32_t> ids_;         // sized for every key; [0, sorted_) final
  size_t sorted_ = 0;
};

}  // namespace fanfold
