#include "common/measures/top.h"

#include <algorithm>
#include <vector>

#include "common/base/value_key.h"

namespace fanfold {

TopState::TopState(const MeasureConfig& config)
    : k_(std::max<uint32_t>(config.k, 1)), limit_(std::max<uint64_t>(config.limit, 1)) {}

void TopState::DecrementAll(uint64_t amount) {
  for (auto it = counters_.begin(); it != counters_.end();) {
    if (it->second <= amount) {
      it = counters_.erase(it);
    } else {
      it->second -= amount;
      ++it;
    }
  }
  exact_ = false;
}

bool TopState::Add(const Value* args) {
  if (!MakeValueKey(args[0], &scratch_)) {
    ++skipped_;
    return true;
  }
  ++n_;
  auto it = counters_.find(std::string_view(scratch_));
  if (it != counters_.end()) {
    ++it->second;
  } else if (counters_.size() < limit_) {
    counters_.emplace(scratch_, 1);
  } else {
    // Misra-Gries: the new value and every counter lose one; the new value
    // thereby vanishes. limit + 1 units leave the summary per decrement,
    // which is where the bound's divisor comes from.
    DecrementAll(1);
  }
  return true;
}

Status TopState::Merge(const MeasureState& other) {
  const auto* o = dynamic_cast<const TopState*>(&other);
  if (o == nullptr) return Status::Internal("top: merge with a state of another measure");
  for (const auto& [key, count] : o->counters_) counters_[key] += count;
  n_ += o->n_;
  skipped_ += o->skipped_;
  exact_ = exact_ && o->exact_;
  if (counters_.size() > limit_) {
    // Agarwal et al. (2012): subtract the (limit+1)-th largest counter from
    // all, which leaves at most limit counters and keeps the bound.
    std::vector<uint64_t> counts;
    counts.reserve(counters_.size());
    for (const auto& kv : counters_) counts.push_back(kv.second);
    std::nth_element(counts.begin(), counts.begin() + static_cast<ptrdiff_t>(limit_), counts.end(),
                     std::greater<>());
    DecrementAll(counts[limit_]);
  }
  return Status::Ok();
}

uint64_t TopState::ErrorBound() const {
  if (exact_) return 0;
  uint64_t kept = 0;
  for (const auto& kv : counters_) kept += kv.second;
  return (n_ - kept) / (limit_ + 1);
}

uint64_t TopState::CountOf(const Value& v) const {
  std::string key;
  if (!MakeValueKey(v, &key)) return 0;
  auto it = counters_.find(std::string_view(key));
  return it == counters_.end() ? 0 : it->second;
}

void TopState::Encode(ByteWriter& w) const {
  std::vector<std::pair<std::string_view, uint64_t>> sorted(counters_.begin(), counters_.end());
  std::sort(sorted.begin(), sorted.end());
  w.Varint(skipped_);
  w.Varint(n_);
  w.U8(exact_ ? 1 : 0);
  w.Varint(sorted.size());
  for (const auto& [key, count] : sorted) {
    w.Str(key);
    w.Varint(count);
  }
}

Status TopState::Decode(ByteReader& r) {
  // Built only on failure: a Status holds a heap string, and this runs per state.
  auto corrupt = [] { return Status::Corrupt("top: bad or truncated state"); };
  const uint64_t skipped = r.Varint();
  const uint64_t n = r.Varint();
  const uint8_t exact = r.U8();
  const uint64_t count = r.Count(3);  // length, tag, counter: a byte each at least
  if (!r.ok() || exact > 1 || count > limit_) return corrupt();
  CounterMap counters;
  counters.reserve(count);
  std::string_view prev;
  uint64_t kept = 0;
  for (uint64_t i = 0; i < count; ++i) {
    const std::string_view key = r.Str();
    const uint64_t c = r.Varint();
    if (!r.ok() || !IsValidValueKey(key) || (i > 0 && !(prev < key)) || c == 0 || c > n - kept)
      return corrupt();
    kept += c;
    counters.emplace(key, c);
    prev = key;
  }
  // Exact counters account for every value; a summary's for at most all.
  if (exact == 1 && kept != n) return corrupt();
  skipped_ = skipped;
  n_ = n;
  exact_ = exact == 1;
  counters_ = std::move(counters);
  return Status::Ok();
}

void TopState::Finalize(std::vector<Cell>* out) const {
  std::vector<std::pair<std::string_view, uint64_t>> entries(counters_.begin(), counters_.end());
  auto before = [](const auto& a, const auto& b) {
    return a.second != b.second ? a.second > b.second : a.first < b.first;
  };
  const size_t shown = std::min<size_t>(k_, entries.size());
  std::partial_sort(entries.begin(), entries.begin() + static_cast<ptrdiff_t>(shown), entries.end(),
                    before);
  std::vector<Cell> list;
  list.reserve(shown);
  for (size_t i = 0; i < shown; ++i) {
    list.push_back(Cell::Record({"value", "count"},
                                {ValueKeyToCell(entries[i].first),
                                 Cell::Int(static_cast<int64_t>(entries[i].second))}));
  }
  out->push_back(Cell::List(std::move(list)));
}

}  // namespace fanfold
