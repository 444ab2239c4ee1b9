// GroupTable::PlanBatch / ApplyBatch: the coordinator's fold of several
// shards' encoded slices into its in-memory table at once.
//
// Folding a partial touches every one of its groups' states — heap objects
// and register/bucket arrays spread over hundreds of megabytes — so folding
// partials one at a time loads each group's states from memory once per
// shard. Walking a batch of shards side by side in key order (a k-way merge
// of their slices) folds every shard's states of a key while that key's
// states are in cache: loaded once per batch. Each key's states still fold
// in shard order, one MergeEncoded call per shard and measure, exactly as
// the one-at-a-time walk would call them, so the states are the same.
// As in MergeWalk, the states' objects are prefetched kAhead keys before
// their merge (their pointers 2 * kAhead before) and asked to prefetch what
// the merge will touch (MeasureState::PrefetchMerge) kAhead / 2 keys before.
#include <cstdint>

#include "common/partial/group_table.h"
#include "common/partial/key_order.h"
#include "common/partial/order_inserts.h"

namespace fanfold {

Status GroupTable::PlanBatch(const std::vector<EncodedSlice>& slices, std::vector<uint64_t>* new_by_slice) {
  DropBatch();
  new_by_slice->assign(slices.size(), 0);
  const size_t m = measure_count();
  if (ordered_ != keys_.size()) {  // groups added since the last walk
    order_ = KeyOrder(keys_);
    ordered_ = keys_.size();
  }
  struct Cursor {
    ByteReader r;
    uint64_t left = 0;   // groups not yet read
    uint64_t group = 0;  // the current group's index in its whole encoding
    bool active = false;
    std::string_view key;
    std::string_view states;
  };
  std::vector<Cursor> cursors;
  cursors.reserve(slices.size());
  // Reads slice i's next group, or marks it done.
  const auto advance = [&](size_t i) {
    Cursor& c = cursors[i];
    if (c.left == 0) {
      c.active = false;
      return Status::Ok();
    }
    c.group = slices[i].first + (slices[i].count - c.left);
    --c.left;
    c.key = c.r.Str();
    const size_t before = c.r.remaining();
    for (size_t j = 0; j < m; ++j) (void)c.r.Str();
    if (!c.r.ok()) return Status::Corrupt("group " + std::to_string(c.group) + ": truncated group");
    c.states = std::string_view(c.key.data() + c.key.size(), before - c.r.remaining());
    c.active = true;
    return Status::Ok();
  };
  for (size_t i = 0; i < slices.size(); ++i) {
    cursors.push_back(Cursor{ByteReader(slices[i].groups), slices[i].count, 0, false, {}, {}});
    FF_RETURN_IF_ERROR(advance(i));
  }
  size_t at = 0;  // position in order_ of the first key not below the last key
  for (;;) {
    const Cursor* lowest = nullptr;
    for (const Cursor& c : cursors)
      if (c.active && (lowest == nullptr || c.key < lowest->key)) lowest = &c;
    if (lowest == nullptr) break;
    const std::string_view key = lowest->key;
    // The table's keys below this one were passed already (keys ascend);
    // the rest are galloped over, as in MergeWalk.
    int c = at < order_.size() ? keys_[order_[at]].compare(key) : 1;
    if (c < 0) {
      at = NextNotBelow(key, at + 1);
      c = at < order_.size() ? keys_[order_[at]].compare(key) : 1;
    }
    BatchKey k;
    k.key = key;
    k.id = c == 0 ? order_[at] : kNewGroup;
    k.before = at;
    k.first_state = static_cast<uint32_t>(batch_states_.size());
    // Every slice holding the key, in slice (shard) order; a new key is
    // added by the first.
    for (size_t i = 0; i < cursors.size(); ++i) {
      if (!cursors[i].active || cursors[i].key != key) continue;
      if (c != 0 && k.slices == 0) ++(*new_by_slice)[i];
      batch_states_.push_back(BatchStates{cursors[i].states, static_cast<uint32_t>(i), cursors[i].group});
      ++k.slices;
      FF_RETURN_IF_ERROR(advance(i));
    }
    batch_keys_.push_back(k);
  }
  return Status::Ok();
}

Status GroupTable::ApplyBatch() {
  const size_t m = measure_count();
  if (scratch_.empty())
    for (const MeasureConfig& c : *configs_) scratch_.push_back(NewMeasureState(c));
  {
    OrderInserts inserts(&order_, &ordered_);  // sorted in at the end of this block
    for (BatchKey& k : batch_keys_) {
      if (k.id != kNewGroup) continue;
      k.id = AddGroup(k.key);
      inserts.Add(k.before, k.id);
    }
  }
  const size_t n = batch_keys_.size();
  constexpr size_t kAhead = kMergeAhead;
  const auto prefetch_objects = [&](size_t d) { PrefetchStates(batch_keys_[d].id); };
  const auto hint = [&](size_t d) {
    const BatchKey& k = batch_keys_[d];
    MeasureState* const* st = &states_[static_cast<size_t>(k.id) * m];
    for (uint32_t s = 0; s < k.slices; ++s) {
      ByteReader r(batch_states_[k.first_state + s].states);
      for (size_t j = 0; j < m; ++j) st[j]->PrefetchMerge(r.Str());
    }
  };
  // The states' pointers (states_ is indexed by group id, so a key's entry
  // is anywhere in it) are loaded 2 * kAhead keys ahead, their objects
  // kAhead ahead.
  const auto prefetch_pointers = [&](size_t d) {
    __builtin_prefetch(&states_[static_cast<size_t>(batch_keys_[d].id) * m]);
  };
  for (size_t d = 0; d < n && d < 2 * kAhead; ++d) prefetch_pointers(d);
  for (size_t d = 0; d < n && d < kAhead; ++d) prefetch_objects(d);
  for (size_t d = 0; d < n && d < kAhead / 2; ++d) hint(d);
  Status failed;
  for (size_t d = 0; d < n && failed.ok(); ++d) {
    if (d + 2 * kAhead < n) prefetch_pointers(d + 2 * kAhead);
    if (d + kAhead < n) prefetch_objects(d + kAhead);
    if (d + kAhead / 2 < n) hint(d + kAhead / 2);
    const BatchKey& k = batch_keys_[d];
    MeasureState* const* st = &states_[static_cast<size_t>(k.id) * m];
    for (uint32_t s = 0; s < k.slices && failed.ok(); ++s) {
      const BatchStates& b = batch_states_[k.first_state + s];
      ByteReader r(b.states);
      for (size_t j = 0; j < m; ++j) {
        ByteReader sr(r.Str());
        Status e = st[j]->MergeEncoded(sr, /*apply=*/true, scratch_[j].get());
        if (e.ok() && !sr.at_end()) e = Status::Corrupt("trailing bytes in measure state");
        if (!e.ok()) {
          failed = e.WithContext("slice " + std::to_string(b.slice) + ", group " + std::to_string(b.group) +
                                 ", measure " + std::to_string(j));
          break;
        }
      }
    }
  }
  DropBatch();
  return failed;
}

}  // namespace fanfold
