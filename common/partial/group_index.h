// GroupIndex: the hash index of a worker's group table
// (common/partial/worker_group_table.h): from a key's 64-bit hash to its
// group id. Open addressing with linear probing over 4-byte slots, at most
// three quarters full, their count a power of two 2^k: a slot holds id + 1 (0 =
// empty) in its low k bits and, above them, bits of the hash that did not
// choose the position (a tag: a probe compares a key only when the tag
// matches). The position is the hash's top k bits, so the caller can fetch
// a key's slot ahead of the probe (Prefetch) — the group table hashes a
// batch's keys first and probes them after. The index holds no keys: the
// caller compares them (`same(id)`) and rehashes them when the index grows
// (`hash_of(id)`). Clear keeps the slots' memory for the next shard's
// table, and the index then grows through the same sizes as a new one, so
// bucket_count() (what a budget counts) is what a new index would have.
// Not thread-safe.
#pragma once

#include <algorithm>
#include <bit>
#include <cstdint>
#include <cstring>
#include <memory>

namespace fanfold {

class GroupIndex {
 public:
  static constexpr uint32_t kNone = UINT32_MAX;
  // Groups a table of `slots` slots takes before it grows (three quarters:
  // a miss probes a few slots, mostly in one cache line, and an index
  // presized for a shard of many groups stays within the budget that
  // held the worker's former index).
  static constexpr size_t MaxGroups(size_t slots) { return slots / 4 * 3; }

  // The slots in use (0 before the first group).
  size_t bucket_count() const { return slots_; }
  // Fetches the slot a key of this hash probes first into the cache.
  void Prefetch(uint64_t hash) const {
    if (slots_ != 0) __builtin_prefetch(&slot_[hash >> shift_]);
  }

  // The id whose key has this hash and `same(id)`, else kNone.
  template <class Same>
  uint32_t Find(uint64_t hash, Same same) const {
    if (slots_ == 0) return kNone;
    const uint32_t tag = Tag(hash);
    for (size_t i = hash >> shift_;; i = (i + 1) & mask_) {
      const uint32_t s = slot_[i];
      if (s == 0) return kNone;
      if ((s & ~mask_) == tag && same((s & mask_) - 1)) return (s & mask_) - 1;
    }
  }

  // Adds id (a group the index does not hold) with its key's hash; `groups`
  // is the number of groups including this one. Grows (rehashing every
  // group 0..groups-2 by hash_of) when the index would pass MaxGroups.
  template <class HashOf>
  void Insert(uint32_t id, uint64_t hash, size_t groups, HashOf hash_of) {
    if (groups > MaxGroups(slots_)) Grow(std::max<size_t>(16, slots_ * 2), id, hash_of);
    Put(id, hash);
  }

  // Makes the index hold `groups` groups without growing (a no-op when it
  // already can). The index may hold groups already: they are rehashed.
  template <class HashOf>
  void Reserve(size_t groups, uint32_t held, HashOf hash_of) {
    if (groups <= MaxGroups(slots_)) return;
    Grow(std::bit_ceil(std::max<size_t>(16, (groups * 4 + 2) / 3)), held, hash_of);
  }

  // No groups, no slots in use; the memory is kept for reuse.
  void Clear() {
    slots_ = 0;
    shift_ = 64;
    mask_ = 0;
  }
  // Bytes allocated (what Clear keeps).
  size_t allocated_bytes() const { return allocated_ * sizeof(uint32_t); }

 private:
  uint32_t Tag(uint64_t hash) const { return static_cast<uint32_t>(hash) & ~mask_; }
  void Put(uint32_t id, uint64_t hash) {
    size_t i = hash >> shift_;
    while (slot_[i] != 0) i = (i + 1) & mask_;
    slot_[i] = Tag(hash) | (id + 1);
  }
  // Uses `slots` slots (a power of two) and puts groups 0..held-1 back.
  template <class HashOf>
  void Grow(size_t slots, uint32_t held, HashOf hash_of) {
    if (slots > allocated_) {
      slot_.reset();  // the old slots are not needed: the keys are rehashed
      slot_ = std::make_unique_for_overwrite<uint32_t[]>(slots);
      allocated_ = slots;
    }
    std::memset(slot_.get(), 0, slots * sizeof(uint32_t));
    slots_ = slots;
    shift_ = 64 - std::countr_zero(slots);
    mask_ = static_cast<uint32_t>(slots - 1);
    for (uint32_t id = 0; id < held; ++id) Put(id, hash_of(id));
  }

  std::unique_ptr<uint32_t[]> slot_;
  size_t allocated_ = 0;  // slots allocated
  size_t slots_ = 0;      // slots in use, a power of two (or 0)
  int shift_ = 64;        // position = hash >> shift_
  uint32_t mask_ = 0;     // slots_ - 1
};

}  // namespace fanfold
