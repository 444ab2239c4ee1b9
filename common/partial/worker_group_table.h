// WorkerGroupTable: a worker's group table for one shard and one reduction.
// Each new key's bytes (common/partial/group_key.h) are stored once in a
// KeyArena and the key gets the next group id; the hash index holds only
// ids (4 bytes a slot, the key hashed once per lookup with XXH3-64); the
// measures' states live in one MeasureColumn per measure indexed by group
// id (flat arrays for the fixed-size measures). Records are fed a batch at a
// time per measure (MeasureColumn::AddBatch).
//
// A table may be given a budget (set_budget): once its bytes (ApproxBytes,
// plus what Encode's sort will take) pass it, the table is full — its
// groups go on taking records, but a new key gets kOverBudget instead of a
// group, and the caller sends that record elsewhere (common/partial/
// table_overflow.h). Every key the table holds therefore saw all its records.
//
// Encode writes exactly GroupTable::Encode's bytes for the same records
// (docs/partial-state.md; GroupTable stays the coordinator's table and the
// reference the differential test compares against). Neither copied nor
// moved (the index's hash reads the key list by address); not thread-safe.
#pragma once

#include <cstdint>
#include <memory>
#include <string_view>
#include <vector>

#include <boost/unordered/unordered_flat_set.hpp>

#include "common/base/byte_io.h"
#include "common/measures/measure.h"
#include "common/partial/key_arena.h"
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
  uint32_t FindOrAdd(std::string_view key);
  static constexpr uint32_t kOverBudget = UINT32_MAX;

  // Bytes past which the table takes no new key (0 = no limit, the default).
  // At least one group is always taken.
  void set_budget(size_t bytes) { budget_ = bytes; }
  bool full() const { return full_; }

  size_t group_count() const { return keys_.size(); }
  size_t measure_count() const { return columns_.size(); }
  std::string_view key(uint32_t g) const { return keys_[g]; }
  MeasureColumn& column(size_t m) { return *columns_[m]; }

  // Appends the table's encoding: GroupTable::Encode's layout, groups in
  // strictly ascending key-byte order.
  void Encode(ByteWriter& w) const;
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
  struct IdHash {
    using is_transparent = void;
    using is_avalanching = void;  // XXH3's bits are already mixed
    const std::vector<std::string_view>* keys;
    size_t operator()(std::string_view s) const;
    size_t operator()(uint32_t id) const { return (*this)((*keys)[id]); }
  };
  struct IdEq {
    using is_transparent = void;
    const std::vector<std::string_view>* keys;
    bool operator()(uint32_t a, uint32_t b) const { return a == b; }
    bool operator()(std::string_view s, uint32_t id) const { return s == (*keys)[id]; }
    bool operator()(uint32_t id, std::string_view s) const { return s == (*keys)[id]; }
  };

  const std::vector<MeasureConfig>* configs_;
  KeyArena key_bytes_;                   // every key's bytes, once
  std::vector<std::string_view> keys_;   // by group id, into key_bytes_
  boost::unordered_flat_set<uint32_t, IdHash, IdEq> index_;
  std::vector<std::unique_ptr<MeasureColumn>> columns_;  // one per measure
  size_t key_total_ = 0;  // bytes of every key
  size_t budget_ = 0;     // 0 = none
  bool full_ = false;
};

}  // namespace fanfold
