#include "common/measures/sum.h"

#include "common/measures/counted_pair.h"

namespace fanfold {

void SumState::MergeSame(const SumState& o) {
  if (o.n_ > 0) {
    AddCompensated(o.sum_);
    // The other correction is small against its sum; adding it to ours
    // (rather than through AddCompensated) keeps it out of the main sum,
    // where it would be rounded away.
    correction_ += o.correction_;
  }
  n_ += o.n_;
  skipped_ += o.skipped_;
}

void SumState::Encode(ByteWriter& w) const { CountedPair{skipped_, n_, sum_, correction_}.Encode(w); }

Status SumState::Decode(ByteReader& r) {
  CountedPair p;
  if (!p.Decode(r)) return Status::Corrupt("sum: truncated state");
  const double sum = p.first, correction = p.second;
  // The correction only stops being finite once the sum has overflowed or
  // met an infinity (t = +-inf above), so a finite sum needs a finite one.
  if (std::isfinite(sum) && !std::isfinite(correction))
    return Status::Corrupt("sum: correction not finite beside a finite sum");
  n_ = p.n;
  skipped_ = p.skipped;
  sum_ = sum;
  correction_ = correction;
  return Status::Ok();
}

void SumState::Finalize(std::vector<Cell>* out) const {
  out->push_back(n_ == 0 ? Cell::Null() : Cell::Float(Result()));
}

}  // namespace fanfold
