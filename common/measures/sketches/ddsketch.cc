#include "common/measures/sketches/ddsketch.h"

#include <algorithm>
#include <bit>

namespace fanfold {

DDSketchState::DDSketchState(const MeasureConfig& config)
    : probabilities_(config.probabilities) {
  alpha_ = std::clamp(config.alpha, 1e-9, 0.999);
  // gamma - 1 = 2 alpha / (1 - alpha); log1p keeps log gamma accurate for
  // small alpha, where log(gamma) would lose most of its digits.
  log_gamma_ = std::log1p(2 * alpha_ / (1 - alpha_));
  inv_log_gamma_ = 1 / log_gamma_;
  estimate_factor_ = 2 / (1 + (1 + alpha_) / (1 - alpha_));
}

Status DDSketchState::Merge(const MeasureState& other) {
  const auto* o = dynamic_cast<const DDSketchState*>(&other);
  if (o == nullptr || o->alpha_ != alpha_)
    return Status::Internal("ddsketch: merge with a state of another measure");
  neg_.MergeFrom(o->neg_);
  pos_.MergeFrom(o->pos_);
  MergeScalars(o->zero_, o->skipped_, o->count(), o->min_, o->max_);
  return Status::Ok();
}

void DDSketchState::MergeScalars(uint64_t zero, uint64_t skipped, uint64_t count, double min, double max) {
  zero_ += zero;
  skipped_ += skipped;
  if (count > 0) {
    if (!(min >= min_)) min_ = min;  // also true while we are empty (NaN)
    if (!(max <= max_)) max_ = max;
  }
}

double DDSketchState::RankEstimate(uint64_t r) const {
  // The extreme order statistics are known exactly.
  if (r == 0) return min_;
  if (r + 1 == count()) return max_;
  double e;
  if (r < neg_.total()) {
    e = -BucketEstimate(neg_.IndexOfRankDescending(r));  // most negative first
  } else if ((r -= neg_.total()) < zero_) {
    e = 0;
  } else {
    e = BucketEstimate(pos_.IndexOfRank(r - zero_));
  }
  // The true order statistic lies in [min, max], so clamping can only bring
  // the estimate closer; it also turns an overflowed estimate finite.
  return std::clamp(e, min_, max_);
}

double DDSketchState::Quantile(double p) const {
  const uint64_t n = count();
  const double h = static_cast<double>(n - 1) * std::clamp(p, 0.0, 1.0);
  uint64_t j = static_cast<uint64_t>(std::floor(h));
  if (j > n - 1) j = n - 1;
  const double f = h - static_cast<double>(j);
  const double lo = RankEstimate(j);
  if (f <= 0 || j + 1 >= n) return lo;
  const double hi = RankEstimate(j + 1);
  return lo == hi ? lo : lo + f * (hi - lo);
}

void DDSketchState::Encode(ByteWriter& w) const {
  w.Varint(skipped_);
  w.Varint(zero_);
  neg_.Encode(w);
  pos_.Encode(w);
  if (count() > 0) {
    w.F64(min_);
    w.F64(max_);
  }
}

namespace {

// 0 negative, 1 zero, 2 positive.
int SignClass(double x) { return x < 0 ? 0 : (x == 0 ? 1 : 2); }

}  // namespace

Status DDSketchState::ReadEncoded(ByteReader& r, Encoded* e) {
  // Built only on failure: a Status holds a heap string, and this runs per state.
  auto corrupt = [] { return Status::Corrupt("ddsketch: bad or truncated state"); };
  e->skipped = r.Varint();
  e->zero = r.Varint();
  if (!r.ok() || e->zero > DDSketchStore::kMaxTotal || !DDSketchStore::ReadRun(r, &e->neg) ||
      !DDSketchStore::ReadRun(r, &e->pos))
    return corrupt();
  const uint64_t n = e->neg.total + e->pos.total + e->zero;  // each < 2^62: no overflow
  if (n > DDSketchStore::kMaxTotal) return corrupt();
  if (n > 0) {
    const double min = r.F64(), max = r.F64();
    if (!r.ok() || !std::isfinite(min) || !std::isfinite(max) || min > max) return corrupt();
    if (std::bit_cast<uint64_t>(min) == std::bit_cast<uint64_t>(-0.0) ||
        std::bit_cast<uint64_t>(max) == std::bit_cast<uint64_t>(-0.0))
      return corrupt();
    // min must belong to the lowest non-empty class, max to the highest.
    const int low = e->neg.span > 0 ? 0 : (e->zero > 0 ? 1 : 2);
    const int high = e->pos.span > 0 ? 2 : (e->zero > 0 ? 1 : 0);
    if (SignClass(min) != low || SignClass(max) != high) return corrupt();
    e->min = min;
    e->max = max;
  }
  return Status::Ok();
}

Status DDSketchState::Decode(ByteReader& r) {
  Encoded e;
  FF_RETURN_IF_ERROR(ReadEncoded(r, &e));
  neg_.AssignRun(e.neg);
  pos_.AssignRun(e.pos);
  zero_ = e.zero;
  skipped_ = e.skipped;
  min_ = e.min;
  max_ = e.max;
  return Status::Ok();
}

Status DDSketchState::MergeEncoded(ByteReader& r, bool apply, MeasureState* /*scratch*/) {
  Encoded e;
  FF_RETURN_IF_ERROR(ReadEncoded(r, &e));
  if (!apply) return Status::Ok();
  neg_.MergeRun(e.neg);
  pos_.MergeRun(e.pos);
  MergeScalars(e.zero, e.skipped, e.neg.total + e.pos.total + e.zero, e.min, e.max);
  return Status::Ok();
}

void DDSketchState::PrefetchMerge(std::string_view encoded) const {
  ByteReader r(encoded);
  (void)r.Varint();  // skipped
  (void)r.Varint();  // zeros
  neg_.PrefetchRun(r);
  pos_.PrefetchRun(r);
}

void DDSketchState::Finalize(std::vector<Cell>* out) const {
  const bool empty = count() == 0;
  for (double p : probabilities_) out->push_back(empty ? Cell::Null() : Cell::Float(Quantile(p)));
}

}  // namespace fanfold
