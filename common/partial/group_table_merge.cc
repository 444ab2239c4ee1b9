// GroupTable::MergeWalk: the coordinator's fold of one encoded table into
// its in-memory table (GroupTable::MergeEncoded), pipelined.
//
// Merging a partial of 50,000 groups touches every group's states, which
// live in heap objects and register/bucket arrays spread over hundreds of
// megabytes: one cache miss after another, each waited for in turn. Here the
// framing is read kAhead groups before the group is merged; a group is
// looked up (or added) and its state objects are prefetched kAhead groups
// early, and kAhead / 2 groups early each state is asked to prefetch what
// its merge will touch (MeasureState::PrefetchMerge). The merge itself is
// exactly the plain walk's: the same groups in the same order, the same
// MergeEncoded calls, the same checks and messages (a framing error found
// while reading ahead is reported only after the groups before it merged,
// as the plain walk would have). Groups read ahead are added to the table
// before the merge reaches them; on failure the table is partly merged
// either way (see MergeEncoded's contract).
#include <algorithm>
#include <array>
#include <cstdint>

#include "common/partial/group_table.h"
#include "common/partial/key_order.h"
#include "common/partial/order_inserts.h"

namespace fanfold {
namespace {

constexpr size_t kAhead = GroupTable::kMergeAhead;  // groups between lookup and merge
constexpr size_t kRing = kAhead + 1;               // groups read but not yet merged, at most

}  // namespace

size_t GroupTable::NextNotBelow(std::string_view key, size_t from) const {
  const size_t n = order_.size();
  const auto below = [&](uint32_t id) { return keys_[id] < key; };
  size_t lo = from;  // every position before lo holds a key below `key`
  size_t probe = from;
  for (size_t step = 1; probe < n && below(order_[probe]); step <<= 1) {
    lo = probe + 1;
    probe = lo + step - 1;
  }
  // The answer is in [lo, min(probe, n)]: probe, if inside, is not below.
  const auto first = order_.begin() + static_cast<std::ptrdiff_t>(lo);
  const auto last = order_.begin() + static_cast<std::ptrdiff_t>(std::min(probe, n));
  return static_cast<size_t>(std::partition_point(first, last, below) - order_.begin());
}

Status GroupTable::MergeWalk(ByteReader& r, uint64_t n, uint64_t first) {
  const size_t m = measure_count();
  if (scratch_.empty())
    for (const MeasureConfig& c : *configs_) scratch_.push_back(NewMeasureState(c));

  if (ordered_ != keys_.size()) {  // groups added since the last walk
    order_ = KeyOrder(keys_);
    ordered_ = keys_.size();
  }
  OrderInserts inserts(&order_, &ordered_);
  size_t at = 0;  // position in order_ of the first key not below the last key read
  std::array<uint32_t, kRing> ids{};
  std::vector<std::string_view> views(kRing * m);  // per ring slot: the m states' bytes
  std::string_view previous;
  uint64_t read = 0;  // groups whose framing was read (and looked up)
  Status read_error;  // the first framing error, reported once the groups before it merged
  size_t states_read = 0;  // with read_error: the bad group's states read before it
  // Reads group `read`'s framing, looks it up and prefetches its states.
  const auto read_next = [&]() {
    const uint64_t g = read;
    const std::string_view key = r.Str();
    if (!r.ok()) {
      read_error = Status::Corrupt("group " + std::to_string(first + g) + ": truncated key");
      return false;
    }
    if (g > 0 && !(previous < key)) {
      read_error = Status::Corrupt("group " + std::to_string(first + g) + ": keys not in strictly ascending order");
      return false;
    }
    previous = key;
    // Keys ascend, so the table's keys below this one were passed already.
    // The rest are galloped over (probes 1, 2, 4, ... ahead, then a binary
    // search between the last two): a partial of a few groups folded into a
    // table of thousands costs a few compares per group, not a walk of the
    // whole table; one that matches the table key for key still costs one.
    // Most often the table's next key is this one: one three-way compare
    // settles it; otherwise the gallop starts just past it.
    int c = at < order_.size() ? keys_[order_[at]].compare(key) : 1;
    if (c < 0) {
      at = NextNotBelow(key, at + 1);
      c = at < order_.size() ? keys_[order_[at]].compare(key) : 1;
    }
    uint32_t id;
    if (c == 0) {
      id = order_[at];
    } else {
      id = AddGroup(key);
      inserts.Add(at, id);
    }
    ids[g % kRing] = id;
    std::string_view* v = &views[(g % kRing) * m];
    for (size_t j = 0; j < m; ++j) {
      v[j] = r.Str();
      if (!r.ok()) {
        read_error = Status::Corrupt("group " + std::to_string(first + g) + ": truncated measure state");
        states_read = j;  // the plain walk merges these before it finds the truncation
        return false;
      }
    }
    PrefetchStates(id);
    ++read;
    return true;
  };
  uint64_t hinted = 0;  // groups whose states were asked to prefetch
  for (uint64_t g = 0; g < n; ++g) {
    while (read_error.ok() && read < n && read <= g + kAhead && read_next()) {
    }
    // Past the last group read, only the bad framing's group is left: its
    // states before the truncation merge first, as in the plain walk.
    const size_t states = g < read ? m : states_read;
    for (; hinted < read && hinted <= g + kAhead / 2; ++hinted) {
      MeasureState* const* st = &states_[static_cast<size_t>(ids[hinted % kRing]) * m];
      const std::string_view* v = &views[(hinted % kRing) * m];
      for (size_t j = 0; j < m; ++j) st[j]->PrefetchMerge(v[j]);
    }
    const std::string_view* v = &views[(g % kRing) * m];
    for (size_t j = 0; j < states; ++j) {
      MeasureState* const mine = states_[static_cast<size_t>(ids[g % kRing]) * m + j];
      ByteReader sr(v[j]);
      Status s = mine->MergeEncoded(sr, /*apply=*/true, scratch_[j].get());
      if (!s.ok()) return s.WithContext("group " + std::to_string(first + g) + ", measure " + std::to_string(j));
      if (!sr.at_end()) return Status::Corrupt("group " + std::to_string(first + g) + ", measure " + std::to_string(j) +
                                               ": trailing bytes in measure state");
    }
    if (g >= read) return read_error;
  }
  return Status::Ok();
}

}  // namespace fanfold
