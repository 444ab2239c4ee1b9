#include "common/partial/worker_group_table.h"

#include <algorithm>
#include <cstdint>
#include <string>

#define XXH_INLINE_ALL  // the short keys hash without a call
#include <xxhash.h>

#include "common/partial/key_order.h"

namespace fanfold {

uint64_t WorkerGroupTable::Hash(std::string_view key) { return XXH3_64bits(key.data(), key.size()); }

void WorkerGroupTable::HashBatch(const char* bytes, const uint32_t* ends, size_t n, uint64_t* hashes) const {
  size_t begin = 0;
  for (size_t i = 0; i < n; ++i) {
    hashes[i] = Hash(std::string_view(bytes + begin, ends[i] - begin));
    index_.Prefetch(hashes[i]);
    begin = ends[i];
  }
}

WorkerGroupTable::WorkerGroupTable(const std::vector<MeasureConfig>* configs) : configs_(configs) {
  for (const MeasureConfig& c : *configs_) columns_.push_back(NewMeasureColumn(c));
}

void WorkerGroupTable::Reserve(size_t groups) {
  // Room for an eighth more than asked (the next shard may hold a few more
  // groups). The index's slots (4 bytes, at most 3/4 full, their count a
  // power of two: up to 2 x 4/3 x 4 = 10.7 bytes a group) stay within a
  // quarter of the budget. The key list is left to grow: copying its views
  // is cheap, and its doubling is what it was.
  constexpr size_t kBytesPerGroup = 11;
  groups += groups / 8;
  if (budget_ > 0) groups = std::min(groups, budget_ / 4 / kBytesPerGroup);
  index_.Reserve(groups, static_cast<uint32_t>(keys_.size()), [this](uint32_t id) { return Hash(keys_[id]); });
}

uint32_t WorkerGroupTable::Add(std::string_view key, uint64_t hash) {
  if (full_) return kOverBudget;
  const uint32_t id = static_cast<uint32_t>(keys_.size());
  if (keys_.size() == key_capacity_) {  // doubles, as a vector's push_back does
    key_capacity_ = std::max<size_t>(1, 2 * key_capacity_);
    keys_.reserve(key_capacity_);
  }
  keys_.push_back(key_bytes_.Add(key));
  index_.Insert(id, hash, keys_.size(), [this](uint32_t g) { return Hash(keys_[g]); });
  key_total_ += key.size();
  key_length_bytes_ += VarintBytes(key.size());
  if (budget_ > 0) {
    const size_t n = keys_.size();
    if (n > stable_until_ || index_.bucket_count() != synced_buckets_ || key_capacity_ != synced_key_capacity_)
      Resync();
    if (base_bytes_ + key_total_ + n * (per_group_ + kSortBytesPerGroup) > budget_) full_ = true;
  }
  return id;
}

void WorkerGroupTable::Clear() {
  keys_.clear();
  key_capacity_ = 0;
  key_bytes_.Clear();
  index_.Clear();
  for (const auto& c : columns_) c->Clear();
  column_groups_ = 0;
  base_bytes_ = per_group_ = stable_until_ = synced_buckets_ = synced_key_capacity_ = 0;
  key_total_ = key_length_bytes_ = 0;
  full_ = false;
}

void WorkerGroupTable::Resync() {
  SyncColumns();
  const size_t n = keys_.size();
  per_group_ = 0;
  stable_until_ = SIZE_MAX;
  for (const auto& c : columns_) {
    per_group_ += c->BytesPerGroup();
    stable_until_ = std::min(stable_until_, c->StableBytesUpTo());
  }
  base_bytes_ = ApproxBytes() - key_total_ - n * per_group_;
  synced_buckets_ = index_.bucket_count();
  synced_key_capacity_ = key_capacity_;
}

bool WorkerGroupTable::Bounded() const {
  // With every column's states bounded (by kMaxBoundedState: one length
  // byte, and one fixed-size copy each), groups are written a block at a
  // time by pointer; else through EncodeGroup.
  bool bounded = true;
  for (const auto& c : columns_) {
    const size_t b = c->EncodeBound();
    bounded = bounded && b > 0 && b <= kMaxBoundedState;
  }
  return bounded;
}

size_t WorkerGroupTable::EncodedBytes() const {
  if (!Bounded()) return 0;
  SyncColumns();
  size_t bytes = VarintBytes(keys_.size()) + key_length_bytes_ + key_total_;  // the group count, the keys
  for (const auto& c : columns_) bytes += keys_.size() + c->EncodedStateBytes(keys_.size());  // a length byte each
  return bytes;
}

void WorkerGroupTable::Encode(ByteWriter& w, const BodyProgress& progress, KeyOrderStretches* order) const {
  SyncColumns();
  const bool bounded = Bounded();
  if (bounded && progress) progress(w.size(), w.size() + kMaxVarintBytes);
  w.Varint(keys_.size());
  if (bounded) {
    if (order != nullptr) {
      EncodeBounded(*order, w, progress);
    } else {
      KeyOrderStretches stretches(keys_);
      EncodeBounded(stretches, w, progress);
    }
    return;
  }
  // The order's ids are read, not taken: an Encode again (a fallback's
  // second writing) finds them still there.
  std::vector<uint32_t> own;
  if (order != nullptr) order->SortAtLeast(keys_.size());
  else own = KeyOrder(keys_);
  const std::vector<uint32_t>& sorted = order != nullptr ? order->ids() : own;
  // Groups go out in key order, scattered in memory: their key bytes and
  // states are fetched a few groups ahead (the states one step later, as
  // the key's bytes wait on its view).
  constexpr size_t kAhead = 8;
  for (size_t i = 0; i < sorted.size(); ++i) {
    if (i + 2 * kAhead < sorted.size()) __builtin_prefetch(&keys_[sorted[i + 2 * kAhead]]);
    if (i + kAhead < sorted.size()) {
      const uint32_t ahead = sorted[i + kAhead];
      __builtin_prefetch(keys_[ahead].data());
      for (const auto& c : columns_) c->Prefetch(ahead);
    }
    EncodeGroup(sorted[i], w);
  }
}

void WorkerGroupTable::EncodeBounded(KeyOrderStretches& stretches, ByteWriter& w,
                                     const BodyProgress& progress) const {
  // EncodeGroup's bytes: the key behind its varint length, then each state
  // behind its length (one byte: every bound is below 0x80). Per block of
  // groups, each column writes its states into a scratch of its own (one
  // call a block); they are then copied behind the keys, kMaxBoundedState
  // bytes at a time (a fixed-size copy; the scratch and the output have
  // that much room past any state). The output grows a piece at a time
  // (zero-filled by resize while the piece is in the cache, then
  // overwritten), within the capacity the caller reserved.
  constexpr size_t kBlock = 256;
  constexpr size_t kPiece = size_t{64} << 10;
  const size_t m = columns_.size();
  std::vector<std::vector<char>> scratch(m);
  for (size_t c = 0; c < m; ++c) scratch[c].resize(kBlock * columns_[c]->EncodeBound() + kMaxBoundedState);
  std::vector<uint32_t> ends(m * (kBlock + 1), 0);  // per column: 0, then each state's end
  const size_t per_group = kMaxVarintBytes + m * (1 + kMaxBoundedState);
  std::string& out = *w.buffer();
  size_t used = out.size();
  char* p = out.data() + used;
  char* limit = p;
  constexpr size_t kAhead = 8;
  const size_t n = keys_.size();
  const std::vector<uint32_t>& order = stretches.ids();
  for (size_t b = 0; b < n; b += kBlock) {
    const size_t k = std::min(kBlock, n - b);
    stretches.SortAtLeast(std::min(n, b + k + 2 * kAhead));  // the block and what is fetched ahead
    for (size_t c = 0; c < m; ++c) columns_[c]->EncodeRangeTo(&order[b], k, scratch[c].data(), &ends[c * (kBlock + 1) + 1]);
    for (size_t i = b; i < b + k; ++i) {
      if (i + 2 * kAhead < n) __builtin_prefetch(&keys_[order[i + 2 * kAhead]]);
      if (i + kAhead < n) __builtin_prefetch(keys_[order[i + kAhead]].data());
      const std::string_view key = keys_[order[i]];
      if (static_cast<size_t>(limit - p) < per_group + key.size()) {
        used = static_cast<size_t>(p - out.data());
        // A piece, but not past the reserved capacity when this group fits.
        const size_t need = per_group + key.size();
        const size_t room = out.capacity() - used;
        const size_t grow_to = used + std::max(need, std::min(kPiece, room));
        if (progress) progress(used, grow_to);
        out.resize(grow_to);
        p = out.data() + used;
        limit = out.data() + out.size();
      }
      p = PutVarint(p, key.size());
      if (!key.empty()) std::memcpy(p, key.data(), key.size());  // an empty key's view may be null
      p += key.size();
      for (size_t c = 0; c < m; ++c) {
        const uint32_t* e = &ends[c * (kBlock + 1) + (i - b)];
        const uint32_t length = e[1] - e[0];
        *p++ = static_cast<char>(length);
        std::memcpy(p, scratch[c].data() + e[0], kMaxBoundedState);
        p += length;
      }
    }
  }
  out.resize(static_cast<size_t>(p - out.data()));
}

std::vector<uint32_t> WorkerGroupTable::SortedGroups() const { return KeyOrder(keys_); }

void WorkerGroupTable::EncodeGroup(uint32_t g, ByteWriter& w) const {
  SyncColumns();
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
  SyncColumns();
  size_t bytes = key_capacity_ * sizeof(std::string_view) +
                 index_.bucket_count() * sizeof(uint32_t);
  bytes += key_total_;
  for (const auto& c : columns_) bytes += c->ApproxBytes();
  return bytes;
}

}  // namespace fanfold
