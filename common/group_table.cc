#include "common/group_table.h"

#include <algorithm>
#include <numeric>

#include <xxhash.h>

namespace fanfold {

size_t GroupTable::Hash::operator()(std::string_view s) const { return XXH3_64bits(s.data(), s.size()); }

GroupTable::GroupTable(const std::vector<MeasureConfig>* configs) : configs_(configs) {}

uint32_t GroupTable::AddGroup(std::string_view key) {
  uint32_t id = static_cast<uint32_t>(keys_.size());
  keys_.emplace_back(key);
  index_.emplace(std::string(key), id);
  for (const MeasureConfig& c : *configs_) {
    owned_.push_back(NewMeasureState(c));
    states_.push_back(owned_.back().get());
  }
  return id;
}

MeasureState* const* GroupTable::FindOrAdd(std::string_view key) {
  auto it = index_.find(key);
  uint32_t id = it != index_.end() ? it->second : AddGroup(key);
  return &states_[static_cast<size_t>(id) * measure_count()];
}

Status GroupTable::MergeFrom(GroupTable&& later) {
  const size_t m = measure_count();
  for (size_t g = 0; g < later.group_count(); ++g) {
    const std::string& key = later.keys_[g];
    auto it = index_.find(key);
    if (it == index_.end()) {
      // Adopt the later table's states: same as merging into empty ones.
      uint32_t id = static_cast<uint32_t>(keys_.size());
      keys_.push_back(key);
      index_.emplace(key, id);
      for (size_t j = 0; j < m; ++j) {
        owned_.push_back(std::move(later.owned_[g * m + j]));
        states_.push_back(owned_.back().get());
      }
      continue;
    }
    MeasureState* const* mine = &states_[static_cast<size_t>(it->second) * m];
    for (size_t j = 0; j < m; ++j) FF_RETURN_IF_ERROR(mine[j]->Merge(*later.states_[g * m + j]));
  }
  later.owned_.clear();  // frees the states merged above
  later.states_.clear();
  later.keys_.clear();
  later.index_.clear();
  return Status::Ok();
}

void GroupTable::Encode(ByteWriter& w) const {
  std::vector<uint32_t> order(keys_.size());
  std::iota(order.begin(), order.end(), 0);
  std::sort(order.begin(), order.end(), [&](uint32_t a, uint32_t b) { return keys_[a] < keys_[b]; });
  w.Varint(keys_.size());
  std::string scratch;
  for (uint32_t g : order) {
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
    if (index_.count(key)) return Status::Corrupt("group " + std::to_string(g) + ": duplicate key");
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
