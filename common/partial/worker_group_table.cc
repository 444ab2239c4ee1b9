#include "common/partial/worker_group_table.h"

#include <string>

#include <xxhash.h>

#include "common/partial/key_order.h"

namespace fanfold {

size_t WorkerGroupTable::IdHash::operator()(std::string_view s) const { return XXH3_64bits(s.data(), s.size()); }

WorkerGroupTable::WorkerGroupTable(const std::vector<MeasureConfig>* configs)
    : configs_(configs), index_(0, IdHash{&keys_}, IdEq{&keys_}) {
  for (const MeasureConfig& c : *configs_) columns_.push_back(NewMeasureColumn(c));
}

uint32_t WorkerGroupTable::FindOrAdd(std::string_view key) {
  auto it = index_.find(key);
  if (it != index_.end()) return *it;
  if (full_) return kOverBudget;
  const uint32_t id = static_cast<uint32_t>(keys_.size());
  keys_.push_back(key_bytes_.Add(key));
  index_.insert(id);
  for (auto& c : columns_) c->Resize(keys_.size());
  key_total_ += key.size();
  if (budget_ > 0 && ApproxBytes() + keys_.size() * kSortBytesPerGroup > budget_) full_ = true;
  return id;
}

void WorkerGroupTable::Encode(ByteWriter& w) const {
  w.Varint(keys_.size());
  const std::vector<uint32_t> order = KeyOrder(keys_);
  // Groups go out in key order, scattered in memory: their key bytes and
  // states are fetched a few groups ahead (the states one step later, as
  // the key's bytes wait on its view).
  constexpr size_t kAhead = 8;
  for (size_t i = 0; i < order.size(); ++i) {
    if (i + 2 * kAhead < order.size()) __builtin_prefetch(&keys_[order[i + 2 * kAhead]]);
    if (i + kAhead < order.size()) {
      const uint32_t ahead = order[i + kAhead];
      __builtin_prefetch(keys_[ahead].data());
      for (const auto& c : columns_) c->Prefetch(ahead);
    }
    EncodeGroup(order[i], w);
  }
}

std::vector<uint32_t> WorkerGroupTable::SortedGroups() const { return KeyOrder(keys_); }

void WorkerGroupTable::EncodeGroup(uint32_t g, ByteWriter& w) const {
  std::string& out = *w.buffer();
  w.Str(keys_[g]);
  for (const auto& c : columns_) {
    // The state is written in place behind a one-byte length, which a
    // state of 128 bytes or more (rare) widens to its varint afterwards:
    // no copy through a scratch string.
    const size_t at = out.size();
    out.push_back('\0');
    c->EncodeGroup(g, w);
    const size_t length = out.size() - at - 1;
    if (length < 0x80) {
      out[at] = static_cast<char>(length);
    } else {
      std::string varint;
      ByteWriter(&varint).Varint(length);
      out[at] = varint[0];
      out.insert(at + 1, varint, 1);
    }
  }
}

size_t WorkerGroupTable::ApproxBytes() const {
  size_t bytes = keys_.capacity() * sizeof(std::string_view) + index_.bucket_count() * (sizeof(uint32_t) + 1);
  bytes += key_total_;
  for (const auto& c : columns_) bytes += c->ApproxBytes();
  return bytes;
}

}  // namespace fanfold
