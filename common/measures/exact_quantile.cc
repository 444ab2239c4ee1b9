#include "common/measures/exact_quantile.h"

#include <algorithm>
#include <bit>
#include <string>

namespace fanfold {

double Type7Quantile(const std::vector<double>& sorted, double p) {
  const size_t n = sorted.size();
  const double h = static_cast<double>(n - 1) * p;
  if (!(h > 0)) return sorted[0];  // p = 0, and a guard against p < 0 or NaN
  size_t lo = static_cast<size_t>(std::floor(h));
  if (lo > n - 1) lo = n - 1;  // p = 1 with rounding; also guards p > 1
  const size_t hi = lo + 1 < n ? lo + 1 : lo;
  const double f = h - static_cast<double>(lo);
  // Equal neighbours (and f = 0) return the order statistic itself, so
  // infinities do not turn into inf - inf = NaN.
  if (f <= 0 || sorted[lo] == sorted[hi]) return sorted[lo];
  return sorted[lo] + f * (sorted[hi] - sorted[lo]);
}

ExactQuantileState::ExactQuantileState(const MeasureConfig& config)
    : probabilities_(config.probabilities), limit_(config.limit) {}

Status ExactQuantileState::Merge(const MeasureState& other) {
  const auto* o = dynamic_cast<const ExactQuantileState*>(&other);
  if (o == nullptr) return Status::Internal("quantile: merge with a state of another measure");
  if (values_.size() + o->values_.size() > limit_) {
    return Status::LimitExceeded("quantile: a group holds more than " + std::to_string(limit_) +
                                 " values; raise \"limit\" or use ddsketch");
  }
  values_.insert(values_.end(), o->values_.begin(), o->values_.end());
  sorted_ = sorted_ && o->values_.empty();
  skipped_ += o->skipped_;
  return Status::Ok();
}

void ExactQuantileState::Sort() const {
  if (!sorted_) std::sort(values_.begin(), values_.end());
  sorted_ = true;
}

void ExactQuantileState::Encode(ByteWriter& w) const {
  Sort();
  w.Varint(skipped_);
  w.Varint(values_.size());
  for (double x : values_) w.F64(x);
}

Status ExactQuantileState::Decode(ByteReader& r) {
  const uint64_t skipped = r.Varint();
  const uint64_t count = r.Count(8);
  if (!r.ok()) return Status::Corrupt("quantile: truncated state");
  if (count > limit_) return Status::Corrupt("quantile: more values than the limit allows");
  std::vector<double> values;
  values.reserve(count);
  for (uint64_t i = 0; i < count; ++i) {
    const double x = r.F64();
    // Canonical form: ascending, no NaN, no -0.0 (see Add).
    if (std::isnan(x) || std::bit_cast<uint64_t>(x) == std::bit_cast<uint64_t>(-0.0) ||
        (!values.empty() && x < values.back()))
      return Status::Corrupt("quantile: values not canonical");
    values.push_back(x);
  }
  if (!r.ok()) return Status::Corrupt("quantile: truncated state");
  skipped_ = skipped;
  values_ = std::move(values);
  sorted_ = true;
  return Status::Ok();
}

void ExactQuantileState::Finalize(std::vector<Cell>* out) const {
  Sort();
  for (double p : probabilities_)
    out->push_back(values_.empty() ? Cell::Null() : Cell::Float(Type7Quantile(values_, p)));
}

}  // namespace fanfold
