// WorkerGroupTable: a worker's group table for one shard and one reduction.
// Each new key's bytes (common/partial/group_key.h) are stored once in a
// KeyArena and the key gets the next group id; the hash index
// (common/partial/group_index.h) holds only ids and hash tags (4 bytes a
// slot). A key is hashed once per lookup (XXH3-64), and a new key's insert
// reuses that hash; only the index's growth hashes the keys again (Reserve
// avoids it; keeping every hash instead would cost 8 bytes a group, which
// pushed the issue-14 row's tables past their default budget). A batch's
// keys are hashed first and their index slots fetched (HashBatch) before the
// lookups, which then rarely wait on memory. The measures' states
// live in one MeasureColumn per measure indexed by group id (flat arrays
// for the fixed-size measures); a new group's empty states are appended in
// one call per column and batch (SyncColumns) rather than per group; a
// budget counts them as they come by arithmetic, asking the columns again
// only when a count could jump (a new chunk, the index's or key list's
// growth). Records are fed a batch at a time per measure
// (MeasureColumn::AddBatch).
//
// A table may be given a budget (set_budget): once its bytes (ApproxBytes,
// plus what Encode's sort will take) pass it, the table is full — its
// groups go on taking records, but a new key gets kOverBudget instead of a
// group, and the caller sends that record elsewhere (common/partial/
// table_overflow.h). Every key the table holds therefore saw all its records.
//
// Encode writes exactly GroupTable::Encode's bytes for the same records
// (docs/partial-state.md; GroupTable stays the coordinator's table and the
// reference the differential test compares against). When every measure's
// state has a small bound (count, count_present, sum) the groups are written
// by pointer, a block of states per column call (EncodeBounded); otherwise
// group by group through a ByteWriter. Neither copied nor moved; not
// thread-safe.
#pragma once

#include <cstdint>
#include <cstring>
#include <memory>
#include <string_view>
#include <vector>

#include "common/base/byte_io.h"
#include "common/measures/measure.h"
#include "common/partial/body_compressor.h"
#include "common/partial/group_index.h"
#include "common/partial/key_arena.h"
#include "common/partial/key_order.h"
#include "common/partial/measure_column.h"

namespace fanfold {

class WorkerGroupTable {
 public:
  // configs must outlive the table.
  explicit WorkerGroupTable(const std::vector<MeasureConfig>* configs);
  WorkerGroupTable(const WorkerGroupTable&) = delete;
  WorkerGroupTable& operator=(const WorkerGroupTable&) = delete;

  // The id of the group whose encoded key is `key` (ids count up from 0 in
  // order of first appearance), creating it, with empty states in every
  // column, if new.
  // When the table is full and the key is new: kOverBudget, nothing added.
  uint32_t FindOrAdd(std::string_view key) { return FindOrAdd(key, Hash(key)); }
  // The same, for a key whose Hash is known (a batch's keys are hashed, and
  // their slots fetched by HashBatch, before they are looked up).
  // Inline: a key found again (most records) costs a probe and a compare.
  uint32_t FindOrAdd(std::string_view key, uint64_t hash) {
    const uint32_t found = index_.Find(hash, [this, key](uint32_t id) { return SameKey(key, keys_[id]); });
    return found != GroupIndex::kNone ? found : Add(key, hash);
  }
  static constexpr uint32_t kOverBudget = UINT32_MAX;
  static uint64_t Hash(std::string_view key);
  // Hash of each of n keys lying end to end in `bytes` (key i ends at
  // ends[i]) into hashes[i], each one's index slot fetched into the cache:
  // one call a batch.
  void HashBatch(const char* bytes, const uint32_t* ends, size_t n, uint64_t* hashes) const;

  // Forgets every group (and fullness), keeping the memory of the index,
  // the key list and arena and the columns for the next shard's groups.
  // From here the table behaves as a new one (same ids, same ApproxBytes
  // at every group, so full at the same group): what it counts is what a
  // new table would hold; the memory it keeps beyond that is at most what
  // it counted before (under the caller's budget then).
  void Clear();

  // Bytes past which the table takes no new key (0 = no limit, the default).
  // At least one group is always taken.
  void set_budget(size_t bytes) { budget_ = bytes; }
  bool full() const { return full_; }

  // Makes room for about `groups` groups in the index, so that a table
  // expected to grow that large (say, as large as the previous shard's)
  // does not rehash on the way. Keeps within a quarter of the budget, if
  // there is one (its slots count toward it). Changes no result.
  void Reserve(size_t groups);

  size_t group_count() const { return keys_.size(); }
  size_t measure_count() const { return columns_.size(); }
  std::string_view key(uint32_t g) const { return keys_[g]; }
  // Measure m's column, holding a state for every group.
  MeasureColumn& column(size_t m) {
    SyncColumns();
    return *columns_[m];
  }

  // Appends the table's encoding: GroupTable::Encode's layout, groups in
  // strictly ascending key-byte order. When the states are bounded (see
  // EncodedBytes), `progress` (if set) hears before each growth of w's
  // buffer how many of its bytes are final (body_compressor.h).
  // `order`, when given, is this table's KeyOrderStretches (made by
  // StartOrder, none of it taken yet): the caller dealt the keys meanwhile.
  void Encode(ByteWriter& w, const BodyProgress& progress = BodyProgress(), KeyOrderStretches* order = nullptr) const;
  // The key order Encode would start with (its deal into buckets done).
  std::unique_ptr<KeyOrderStretches> StartOrder() const { return std::make_unique<KeyOrderStretches>(keys_); }
  // Exactly how many bytes Encode writes, when every column's states are
  // bounded (one pass over the states in group order, not the key sort);
  // else 0. Reads the keys only as StartOrder does, so the two may run on
  // two threads at once once Sync was called.
  size_t EncodedBytes() const;
  // Gives every column a state for every group (Encode and EncodedBytes
  // do it first).
  void Sync() const { SyncColumns(); }
  // The group ids in Encode's order (ascending key bytes).
  std::vector<uint32_t> SortedGroups() const;
  // Appends group g as Encode writes it: the key, then each measure's state
  // behind its varint length.
  void EncodeGroup(uint32_t g, ByteWriter& w) const;

  // Bytes held by the index, the key list and arena and the columns (not
  // what a variable-size state owns), for the bytes-per-group figure and
  // the budget. O(measures).
  size_t ApproxBytes() const;
  // About how many bytes Encode writes (keys and their lengths, and a few
  // bytes a state), to reserve them.
  size_t EncodedBytesHint() const { return key_total_ + keys_.size() * (2 + 10 * columns_.size()); }
  // Bytes Encode's sort takes per group while it runs.
  static constexpr size_t kSortBytesPerGroup = 20;

 private:
  // a == b; keys of 8 to 16 bytes (most: an integer, or a short string and
  // a tag) by two overlapping 8-byte loads instead of a call to memcmp.
  static bool SameKey(std::string_view a, std::string_view b) {
    const size_t n = a.size();
    if (n != b.size()) return false;
    if (n < 8 || n > 16) return a == b;
    uint64_t a0, a1, b0, b1;
    std::memcpy(&a0, a.data(), 8);
    std::memcpy(&b0, b.data(), 8);
    std::memcpy(&a1, a.data() + n - 8, 8);
    std::memcpy(&b1, b.data() + n - 8, 8);
    return ((a0 ^ b0) | (a1 ^ b1)) == 0;
  }

  // Encode's groups, in `order`, when every column has an EncodeBound of at
  // most kMaxBoundedState: written a block at a time by pointer.
  // The key order is sorted a stretch at a time as the groups are written.
  void EncodeBounded(KeyOrderStretches& order, ByteWriter& w, const BodyProgress& progress) const;
  bool Bounded() const;
  static constexpr size_t kMaxBoundedState = 64;

  // FindOrAdd of a key the index does not hold.
  uint32_t Add(std::string_view key, uint64_t hash);
  // Recomputes the budget's base (see FindOrAdd) at the current size.
  void Resync();

  // Gives every column a state for every group.
  void SyncColumns() const {
    if (column_groups_ == keys_.size()) return;
    column_groups_ = keys_.size();
    for (const auto& c : columns_) c->Resize(column_groups_);
  }

  const std::vector<MeasureConfig>* configs_;
  KeyArena key_bytes_;                   // every key's bytes, once
  std::vector<std::string_view> keys_;   // by group id, into key_bytes_
  size_t key_capacity_ = 0;  // keys_'s, as if grown from empty by doubling
  GroupIndex index_;                     // hash -> group id
  std::vector<std::unique_ptr<MeasureColumn>> columns_;  // one per measure
  mutable size_t column_groups_ = 0;  // groups every column holds a state for
  // Under a budget: ApproxBytes() at n groups, for n up to stable_until_ and
  // while the index and key list keep their sizes, is
  // base_bytes_ + key_total_ + n * per_group_.
  size_t base_bytes_ = 0;
  size_t per_group_ = 0;
  size_t stable_until_ = 0;
  size_t synced_buckets_ = 0;
  size_t synced_key_capacity_ = 0;  // key_capacity_ at the last Resync
  size_t key_total_ = 0;  // bytes of every key
  size_t key_length_bytes_ = 0;  // bytes of every key's varint length
  size_t budget_ = 0;     // 0 = none
  bool full_ = false;
};

}  // namespace fanfold
