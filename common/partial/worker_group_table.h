// WorkerGroupTable: a worker's group table for one shard and one reduction.
// Each new key's bytes (common/partial/group_key.h) are stored once in a
// KeyArena and the key gets the next group id; the hash index holds only
// ids (4 bytes a slot, the key hashed once per lookup with XXH3-64); the
// measures' states live in one MeasureColumn per measure indexed by group
// id (flat arrays for the fixed-size measures). Records are fed a batch at a
// time per measure (MeasureColumn::AddBatch).
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
  uint32_t FindOrAdd(std::string_view key);

  size_t group_count() const { return keys_.size(); }
  size_t measure_count() const { return columns_.size(); }
  std::string_view key(uint32_t g) const { return keys_[g]; }
  MeasureColumn& column(size_t m) { return *columns_[m]; }

  // Appends the table's encoding: GroupTable::Encode's layout, groups in
  // strictly ascending key-byte order.
  void Encode(ByteWriter& w) const;

  // Bytes held by the index, the key list and arena and the columns (not
  // what a variable-size state owns), for the bytes-per-group figure.
  size_t ApproxBytes() const;

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
};

}  // namespace fanfold
