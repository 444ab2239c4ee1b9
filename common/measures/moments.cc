#include "common/measures/moments.h"

#include "common/measures/counted_pair.h"

namespace fanfold {

void MomentsState::MergeSame(const MomentsState& o) {
  skipped_ += o.skipped_;
  if (o.n_ == 0) return;
  all_integers_ = all_integers_ && o.all_integers_ && wide_.Add(o.wide_.total());
  if (n_ == 0) {
    n_ = o.n_;
    mean_ = o.mean_;
    m2_ = o.m2_;
    return;
  }
  // Chan, Golub & LeVeque (1979): delta = mean_B - mean_A,
  // mean = mean_A + delta * n_B / n, M2 = M2_A + M2_B + delta^2 * n_A * n_B / n.
  const double na = static_cast<double>(n_);
  const double nb = static_cast<double>(o.n_);
  const double n = na + nb;
  const double delta = o.mean_ - mean_;
  mean_ += delta * (nb / n);
  m2_ += o.m2_ + delta * delta * (na * (nb / n));
  n_ += o.n_;
}

void MomentsState::Encode(ByteWriter& w) const {
  CountedPair{skipped_, n_, mean_, m2_}.Encode(w);
  if (n_ == 0) return;
  w.U8(all_integers_ ? 1 : 0);
  if (all_integers_) wide_.Encode(w);
}

Status MomentsState::Decode(ByteReader& r) {
  CountedPair p;
  if (!p.Decode(r)) return Status::Corrupt("moments: truncated state");
  const uint64_t n = p.n;
  const double mean = p.first, m2 = p.second;
  // M2 is a sum of squares: never negative. NaN is legal (an infinite input
  // makes it inf - inf), so only an ordered negative value is rejected.
  if (m2 < 0) return Status::Corrupt("moments: negative sum of squared deviations");
  if (n == 1 && m2 != 0 && !std::isnan(m2))
    return Status::Corrupt("moments: one value with a non-zero spread");
  uint8_t all_integers = 1;
  WideSum wide;
  if (n > 0) {
    all_integers = r.U8();
    if (!r.ok() || all_integers > 1 || (all_integers == 1 && !wide.Decode(r, n)))
      return Status::Corrupt("moments: bad or truncated integer sum");
  }
  n_ = n;
  all_integers_ = all_integers == 1;
  wide_ = wide;
  skipped_ = p.skipped;
  mean_ = mean;
  m2_ = m2;
  return Status::Ok();
}

void MomentsState::Finalize(std::vector<Cell>* out) const {
  if (kind_ == MeasureKind::kMean) {
    out->push_back(n_ == 0 ? Cell::Null() : Cell::Float(mean()));
    return;
  }
  if (n_ < 2) {
    out->push_back(Cell::Null());
    return;
  }
  const double variance = m2_ / static_cast<double>(n_ - 1);
  out->push_back(Cell::Float(kind_ == MeasureKind::kStddev ? std::sqrt(variance) : variance));
}

}  // namespace fanfold
