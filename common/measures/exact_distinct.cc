#include "common/measures/exact_distinct.h"

#include <algorithm>
#include <vector>

#include "common/base/value_key.h"

namespace fanfold {

bool ExactDistinctState::Add(const Value* args) {
  if (!MakeValueKey(args[0], &scratch_)) {
    ++skipped_;
    return true;
  }
  if (keys_.find(std::string_view(scratch_)) != keys_.end()) return true;
  if (keys_.size() >= limit_) return false;
  keys_.insert(scratch_);
  return true;
}

Status ExactDistinctState::LimitError() const {
  return Status::LimitExceeded("distinct: a group holds more than " + std::to_string(limit_) +
                               " distinct values; raise \"limit\" or use hyperloglog");
}

Status ExactDistinctState::Merge(const MeasureState& other) {
  const auto* o = dynamic_cast<const ExactDistinctState*>(&other);
  if (o == nullptr) return Status::Internal("distinct: merge with a state of another measure");
  for (const std::string& k : o->keys_) {
    if (keys_.size() >= limit_ && keys_.find(std::string_view(k)) == keys_.end())
      return LimitError();
    keys_.insert(k);
  }
  skipped_ += o->skipped_;
  return Status::Ok();
}

void ExactDistinctState::Encode(ByteWriter& w) const {
  std::vector<std::string_view> sorted(keys_.begin(), keys_.end());
  std::sort(sorted.begin(), sorted.end());
  w.Varint(skipped_);
  w.Varint(sorted.size());
  for (std::string_view k : sorted) w.Str(k);
}

Status ExactDistinctState::Decode(ByteReader& r) {
  // Built only on failure: a Status holds a heap string, and this runs per state.
  auto corrupt = [] { return Status::Corrupt("distinct: bad or truncated state"); };
  const uint64_t skipped = r.Varint();
  const uint64_t count = r.Count(2);  // length byte + tag byte at least
  if (!r.ok() || count > limit_) return corrupt();
  std::unordered_set<std::string, TransparentStringHash, std::equal_to<>> keys;
  keys.reserve(count);
  std::string_view prev;
  for (uint64_t i = 0; i < count; ++i) {
    const std::string_view k = r.Str();
    // Strictly ascending: canonical, and no duplicates.
    if (!r.ok() || !IsValidValueKey(k) || (i > 0 && !(prev < k))) return corrupt();
    keys.emplace(k);
    prev = k;
  }
  skipped_ = skipped;
  keys_ = std::move(keys);
  return Status::Ok();
}

void ExactDistinctState::Finalize(std::vector<Cell>* out) const {
  out->push_back(Cell::Int(static_cast<int64_t>(keys_.size())));
}

}  // namespace fanfold
