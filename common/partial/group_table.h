// GroupTable: encoded group key → one MeasureState per measure. Workers fill
// one per shard (FindOrAdd per record); the coordinator folds shard tables,
// in shard order and straight from their encoding, into one table with
// MergeEncoded (after CheckEncoded when a bad table must leave it as it was). Keys are
// the bytes of common/partial/group_key.h; lookups hash the key once and allocate
// only when a new group appears; MergeEncoded finds a partial's keys by
// walking them beside the table's own keys in key order. Not thread-safe.
//
// Encoding (inside a partial state body): varint group count, then per group
// in strictly ascending key-byte order (so a key cannot repeat): key (varint
// length + bytes), then per measure its state as varint length + bytes (so a
// state's decoder cannot read into the next one).
#pragma once

#include <cstdint>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include <boost/unordered/unordered_flat_map.hpp>

#include "common/base/byte_io.h"
#include "common/partial/key_arena.h"
#include "common/measures/measure.h"
#include "common/base/status.h"

namespace fanfold {

class GroupTable {
 public:
  // configs must outlive the table.
  explicit GroupTable(const std::vector<MeasureConfig>* configs);
  GroupTable(GroupTable&&) = default;
  GroupTable& operator=(GroupTable&&) = default;

  // Returns the measure states (measure_count() of them) of the group whose
  // encoded key is `key`, creating the group if new. The pointer stays valid
  // until the table is destroyed or merged from.
  MeasureState* const* FindOrAdd(std::string_view key);

  size_t group_count() const { return keys_.size(); }
  size_t measure_count() const { return configs_->size(); }

  // Group i's key and states, for i < group_count() (insertion order).
  std::string_view key(size_t i) const { return keys_[i]; }
  MeasureState* const* states(size_t i) const { return &states_[i * measure_count()]; }

  // Checks that `encoded` (Encode's bytes, from a later shard) is a valid
  // table for these measures, without changing this one.
  Status CheckEncoded(std::string_view encoded);
  // Folds the encoded table into this one, group by group and measure by
  // measure (MeasureState::MergeEncoded), building no intermediate table,
  // checking every byte as CheckEncoded does while it goes. A failure
  // (corrupt bytes, or a bounded measure past its limit) leaves this table
  // partly merged: callers either ran CheckEncoded first, so only a limit
  // can fail here, or discard the table on failure (coordinator/run/merger
  // rebuilds it).
  Status MergeEncoded(std::string_view encoded);
  // The same two over a slice of an encoding: `count` groups framed as in
  // Encode but without the leading count, the first being group `first` of
  // the whole (messages name groups by their index in the whole). The
  // caller checked the slice's framing and that its keys ascend.
  Status CheckEncodedGroups(std::string_view groups, uint64_t count, uint64_t first);
  Status MergeEncodedGroups(std::string_view groups, uint64_t count, uint64_t first);

  // The batched fold (group_table_batch.cc): several later shards' slices
  // at once, in shard order, walked side by side in key order, so each
  // group's states are loaded once per batch rather than once per shard.
  // Each key's states fold exactly as MergeEncodedGroups would fold the
  // slices one after another (shard order), so the result is the same.
  // PlanBatch reads the slices' framing and finds every key, changing
  // nothing; (*new_by_slice)[i]: the keys the table lacks whose first
  // slice is i (what folding slice i alone would add after the ones
  // before it). ApplyBatch then adds them and merges; DropBatch forgets a
  // plan that will not be applied. A failure of either (bad bytes, a
  // bounded measure past its limit) names the group (and, in ApplyBatch,
  // the slice and measure); after ApplyBatch fails the table is partly
  // merged (callers rebuild it). REQUIRES: each slice's framing was checked
  // (CutByKeys: lengths fit, keys ascend); the slices' bytes stay live
  // until ApplyBatch returns; nothing else changes the table in between.
  struct EncodedSlice {
    std::string_view groups;  // `count` groups framed as in Encode, no leading count
    uint64_t count = 0;
    uint64_t first = 0;       // the first group's index in its whole encoding
  };
  Status PlanBatch(const std::vector<EncodedSlice>& slices, std::vector<uint64_t>* new_by_slice);
  Status ApplyBatch();
  void DropBatch() {
    batch_keys_.clear();
    batch_states_.clear();
  }
  // Prefetches the first lines of group id's state objects.
  void PrefetchStates(uint32_t id) const {
    MeasureState* const* st = &states_[static_cast<size_t>(id) * measure_count()];
    for (size_t j = 0; j < measure_count(); ++j) {
      // An object's first three lines: a sketch's store bookkeeping too
      // (addresses as integers: a small state ends before them).
      const uintptr_t at = reinterpret_cast<uintptr_t>(st[j]);
      for (uintptr_t line = 0; line < 192; line += 64) __builtin_prefetch(reinterpret_cast<const void*>(at + line));
    }
  }
  // Groups between a group's lookup (and its states' prefetch) and its
  // merge, in both walks.
  static constexpr size_t kMergeAhead = 16;
  void Encode(ByteWriter& w) const;
  // REQUIRES: this table is empty. Fails on corrupt bytes.
  Status Decode(ByteReader& r);

 private:
  struct Hash {
    using is_transparent = void;
    size_t operator()(std::string_view s) const;
  };
  struct Eq {
    using is_transparent = void;
    bool operator()(std::string_view a, std::string_view b) const { return a == b; }
  };
  uint32_t AddGroup(std::string_view key);
  uint32_t FindOrAddId(std::string_view key);
  // CheckEncoded's walk over n groups numbered from `first`: every byte
  // checked, nothing changed.
  Status CheckWalk(ByteReader& r, uint64_t n, uint64_t first);
  // MergeEncoded's walk (group_table_merge.cc): the same checks in the same
  // order, with the groups' framing read a few groups ahead of the merge
  // so that their lookups and states' memory are loaded in the meantime.
  Status MergeWalk(ByteReader& r, uint64_t n, uint64_t first);
  // The first position at or after `from` in order_ whose key is not below
  // `key`. REQUIRES: every key before `from` is below `key`.
  size_t NextNotBelow(std::string_view key, size_t from) const;

  const std::vector<MeasureConfig>* configs_;
  KeyArena key_bytes_;  // every key's bytes, once; keys_ and index_ view them
  boost::unordered_flat_map<std::string_view, uint32_t, Hash, Eq> index_;
  std::vector<std::string_view> keys_;
  // Group-major states; states_[i] == owned_[i].get() always (states_ is
  // the raw view FindOrAdd hands out).
  std::vector<MeasureState*> states_;
  std::vector<std::unique_ptr<MeasureState>> owned_;
  // Group ids in ascending key order, for groups [0, ordered_): MergeWalk
  // finds a partial's (ascending) keys by walking it, not by hashing each.
  // Groups added outside MergeWalk are sorted in at its next call.
  std::vector<uint32_t> order_;
  size_t ordered_ = 0;
  // One state per measure that encoded states are checked in or decoded
  // into while merging (MeasureState::MergeEncoded's scratch).
  std::vector<std::unique_ptr<MeasureState>> scratch_;
  // The planned batch (PlanBatch to ApplyBatch): each distinct key in
  // ascending order with its group id (kNewGroup: to be added before
  // order_[before]) and its slices' states, in slice order.
  static constexpr uint32_t kNewGroup = UINT32_MAX;
  struct BatchKey {
    std::string_view key;
    uint32_t id = kNewGroup;
    size_t before = 0;
    uint32_t first_state = 0;  // into batch_states_
    uint32_t slices = 0;       // how many slices hold the key
  };
  struct BatchStates {
    std::string_view states;  // the group's m length-prefixed states
    uint32_t slice = 0;
    uint64_t group = 0;       // index in its whole encoding, for messages
  };
  std::vector<BatchKey> batch_keys_;
  std::vector<BatchStates> batch_states_;
};

}  // namespace fanfold
