#include "common/measures/histogram.h"

#include <algorithm>
#include <limits>

#include "common/base/value_compare.h"
#include "common/measures/histogram_bins.h"

namespace fanfold {

HistogramState::HistogramState(const MeasureConfig& config)
    // Unchecked bins (no edges) still give the two columns HistogramColumns names.
    : edges_(HistogramEdges(config)), counts_(std::max<size_t>(edges_.size() + 1, 2), 0) {}

size_t HistogramState::Slot(const std::vector<double>& edges, const Value& x) {
  if (!x.is_integer()) return static_cast<size_t>(std::upper_bound(edges.begin(), edges.end(), x.number) - edges.begin());
  // An integer past 2^53 may not be a double: compare it exactly.
  const WideInt w = x.Wide();
  return static_cast<size_t>(
      std::partition_point(edges.begin(), edges.end(), [&](double e) { return CompareWideToDouble(w, e) >= 0; }) -
      edges.begin());
}

bool HistogramState::Add(const Value* args) {
  Value x;
  if (UsableNumeric(args[0], &x, &skipped_)) ++counts_[Slot(edges_, x)];
  return true;
}

Status HistogramState::Merge(const MeasureState& other) {
  const auto* o = dynamic_cast<const HistogramState*>(&other);
  if (o == nullptr || o->edges_ != edges_) return Status::Internal("histogram: merge with a state of another measure");
  for (size_t i = 0; i < counts_.size(); ++i) counts_[i] += o->counts_[i];
  skipped_ += o->skipped_;
  return Status::Ok();
}

void HistogramState::Encode(ByteWriter& w) const {
  w.Varint(skipped_);
  w.Varint(counts_.size());
  w.Varint(static_cast<uint64_t>(std::count_if(counts_.begin(), counts_.end(), [](uint64_t c) { return c != 0; })));
  size_t next = 0;  // the index a gap of 0 names
  for (size_t i = 0; i < counts_.size(); ++i) {
    if (counts_[i] == 0) continue;
    w.Varint(i - next);
    w.Varint(counts_[i]);
    next = i + 1;
  }
}

Status HistogramState::Decode(ByteReader& r) {
  const auto bad = [] { return Status::Corrupt("histogram: bad or truncated state"); };
  const uint64_t skipped = r.Varint();
  const uint64_t slots = r.Varint();
  if (!r.ok() || slots != counts_.size()) return bad();
  const uint64_t k = r.Count(2);  // each entry is at least two bytes
  if (!r.ok() || k > slots) return bad();
  std::vector<uint64_t> counts(counts_.size(), 0);
  uint64_t next = 0;
  for (uint64_t j = 0; j < k; ++j) {
    const uint64_t gap = r.Varint();
    const uint64_t count = r.Varint();
    // Int cells are signed: a count past INT64_MAX cannot have been made.
    if (!r.ok() || gap >= slots - next || count == 0 ||
        count > static_cast<uint64_t>(std::numeric_limits<int64_t>::max()))
      return bad();
    counts[next + gap] = count;
    next += gap + 1;
  }
  skipped_ = skipped;
  counts_ = std::move(counts);
  return Status::Ok();
}

void HistogramState::Finalize(std::vector<Cell>* out) const {
  for (uint64_t c : counts_) out->push_back(Cell::Int(c));
}

}  // namespace fanfold
