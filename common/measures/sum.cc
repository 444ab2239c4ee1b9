#include "common/measures/sum.h"

namespace fanfold {

Status SumState::Merge(const MeasureState& other) {
  const auto* o = dynamic_cast<const SumState*>(&other);
  if (o == nullptr) return Status::Internal("sum: merge with a state of another measure");
  MergeSame(o);
  return Status::Ok();
}

Status SumState::MergeEncoded(ByteReader& r, bool apply, MeasureState* /*scratch*/) {
  SumState later;
  FF_RETURN_IF_ERROR(later.Decode(r));
  if (apply) MergeSame(&later);
  return Status::Ok();
}

void SumState::MergeSame(const SumState* o) {
  if (o->n_ > 0) {
    AddCompensated(o->sum_);
    // The other correction is small against its sum; adding it to ours
    // (rather than through AddCompensated) keeps it out of the main sum,
    // where it would be rounded away.
    correction_ += o->correction_;
  }
  n_ += o->n_;
  skipped_ += o->skipped_;
}

void SumState::Encode(ByteWriter& w) const {
  w.Varint(skipped_);
  w.Varint(n_);
  if (n_ > 0) {
    w.F64(sum_);
    w.F64(correction_);
  }
}

Status SumState::Decode(ByteReader& r) {
  const uint64_t skipped = r.Varint();
  const uint64_t n = r.Varint();
  double sum = 0, correction = 0;
  if (n > 0) {
    sum = r.F64();
    correction = r.F64();
  }
  if (!r.ok()) return Status::Corrupt("sum: truncated state");
  // The correction only stops being finite once the sum has overflowed or
  // met an infinity (t = +-inf above), so a finite sum needs a finite one.
  if (std::isfinite(sum) && !std::isfinite(correction))
    return Status::Corrupt("sum: correction not finite beside a finite sum");
  n_ = n;
  skipped_ = skipped;
  sum_ = sum;
  correction_ = correction;
  return Status::Ok();
}

void SumState::Finalize(std::vector<Cell>* out) const {
  out->push_back(n_ == 0 ? Cell::Null() : Cell::Float(Result()));
}

}  // namespace fanfold
