#include "common/partial/group_table.h"

#include <xxhash.h>

#include "common/partial/key_order.h"

namespace fanfold {

size_t GroupTable::Hash::operator()(std::string_view s) const { return XXH3_64bits(s.data(), s.size()); }

GroupTable::GroupTable(const std::vector<MeasureConfig>* configs) : configs_(configs) {}

uint32_t GroupTable::AddGroup(std::string_view key) {
  uint32_t id = static_cast<uint32_t>(keys_.size());
  const std::string_view stored = key_bytes_.Add(key);
  keys_.push_back(stored);
  index_.emplace(stored, id);
  for (const MeasureConfig& c : *configs_) {
    owned_.push_back(NewMeasureState(c));
    states_.push_back(owned_.back().get());
  }
  return id;
}

uint32_t GroupTable::FindOrAddId(std::string_view key) {
  auto it = index_.find(key);
  return it != index_.end() ? it->second : AddGroup(key);
}

MeasureState* const* GroupTable::FindOrAdd(std::string_view key) {
  return &states_[static_cast<size_t>(FindOrAddId(key)) * measure_count()];
}

namespace {

// Both walks over a whole encoding: its count, the groups, nothing after.
template <class Walk>
Status WalkWhole(std::string_view encoded, size_t m, Walk walk) {
  ByteReader r(encoded);
  // Each group needs at least a key length byte and m state length bytes.
  const uint64_t n = r.Count(1 + m);
  if (!r.ok()) return Status::Corrupt("group count larger than the partial state");
  FF_RETURN_IF_ERROR(walk(r, n));
  if (!r.at_end()) return Status::Corrupt("trailing bytes after the last group");
  return Status::Ok();
}

}  // namespace

Status GroupTable::CheckEncoded(std::string_view encoded) {
  return WalkWhole(encoded, measure_count(), [this](ByteReader& r, uint64_t n) { return CheckWalk(r, n, 0); });
}

Status GroupTable::MergeEncoded(std::string_view encoded) {
  return WalkWhole(encoded, measure_count(), [this](ByteReader& r, uint64_t n) { return MergeWalk(r, n, 0); });
}

Status GroupTable::CheckEncodedGroups(std::string_view groups, uint64_t count, uint64_t first) {
  ByteReader r(groups);
  return CheckWalk(r, count, first);
}

Status GroupTable::MergeEncodedGroups(std::string_view groups, uint64_t count, uint64_t first) {
  ByteReader r(groups);
  return MergeWalk(r, count, first);
}

Status GroupTable::CheckWalk(ByteReader& r, uint64_t n, uint64_t first) {
  const size_t m = measure_count();
  if (scratch_.empty())
    for (const MeasureConfig& c : *configs_) scratch_.push_back(NewMeasureState(c));
  std::string_view previous;
  for (uint64_t g = first; g < first + n; ++g) {
    const std::string_view key = r.Str();
    if (!r.ok()) return Status::Corrupt("group " + std::to_string(g) + ": truncated key");
    if (g > first && !(previous < key))
      return Status::Corrupt("group " + std::to_string(g) + ": keys not in strictly ascending order");
    previous = key;
    for (size_t j = 0; j < m; ++j) {
      const std::string_view bytes = r.Str();
      if (!r.ok()) return Status::Corrupt("group " + std::to_string(g) + ": truncated measure state");
      ByteReader sr(bytes);
      // Checking runs in the scratch state itself: with apply false no
      // override changes its target, and the default decodes into scratch.
      Status s = scratch_[j]->MergeEncoded(sr, /*apply=*/false, scratch_[j].get());
      if (!s.ok()) return s.WithContext("group " + std::to_string(g) + ", measure " + std::to_string(j));
      if (!sr.at_end()) return Status::Corrupt("group " + std::to_string(g) + ", measure " + std::to_string(j) +
                                               ": trailing bytes in measure state");
    }
  }
  return Status::Ok();
}

void GroupTable::Encode(ByteWriter& w) const {
  w.Varint(keys_.size());
  std::string scratch;
  for (const uint32_t g : KeyOrder(keys_)) {
    w.Str(keys_[g]);
    for (size_t j = 0; j < measure_count(); ++j) {
      scratch.clear();
      ByteWriter sw(&scratch);
      states_[g * measure_count() + j]->Encode(sw);
      w.Str(scratch);
    }
  }
}

Status GroupTable::Decode(ByteReader& r) {
  if (!keys_.empty()) return Status::Internal("GroupTable::Decode into a non-empty table");
  const size_t m = measure_count();
  // Each group needs at least a key length byte and m state length bytes.
  uint64_t n = r.Count(1 + m);
  if (!r.ok()) return Status::Corrupt("group count larger than the partial state");
  keys_.reserve(n);
  for (uint64_t g = 0; g < n; ++g) {
    std::string_view key = r.Str();
    if (!r.ok()) return Status::Corrupt("group " + std::to_string(g) + ": truncated key");
    if (g > 0 && !(keys_.back() < key))
      return Status::Corrupt("group " + std::to_string(g) + ": keys not in strictly ascending order");
    AddGroup(key);
    for (size_t j = 0; j < m; ++j) {
      std::string_view bytes = r.Str();
      if (!r.ok()) return Status::Corrupt("group " + std::to_string(g) + ": truncated measure state");
      ByteReader sr(bytes);
      Status s = states_[g * m + j]->Decode(sr);
      if (!s.ok()) return s.WithContext("group " + std::to_string(g) + ", measure " + std::to_string(j));
      if (!sr.at_end()) return Status::Corrupt("group " + std::to_string(g) + ", measure " + std::to_string(j) +
                                               ": trailing bytes in measure state");
    }
  }
  return Status::Ok();
}

}  // namespace fanfold
