#include "common/measures/sum.h"

namespace fanfold {

void SumState::AddInteger(WideInt x) {
  if (wide_.Add(x)) return;
  double hi, lo;
  WideSum::Split(wide_.total(), &hi, &lo);
  AddCompensated(hi);
  AddCompensated(lo);
  wide_.Clear();
  wide_.Add(x);
  float_result_ = true;
}

double SumState::Result() const {
  double sum = sum_, correction = correction_;
  // Adding a zero integer part would turn a sum of -0.0 into 0.0.
  if (wide_.total() != 0) {
    double hi, lo;
    WideSum::Split(wide_.total(), &hi, &lo);
    AddCompensated(hi, &sum, &correction);
    AddCompensated(lo, &sum, &correction);
  }
  return std::isfinite(sum) ? sum + correction : sum;
}

void SumState::MergeSame(const SumState& o) {
  if (o.float_result_) {
    AddCompensated(o.sum_);
    // The other correction is small against its sum; adding it to ours
    // (rather than through AddCompensated) keeps it out of the main sum,
    // where it would be rounded away.
    correction_ += o.correction_;
    float_result_ = true;
  }
  AddInteger(o.wide_.total());
  n_ += o.n_;
  skipped_ += o.skipped_;
}

void SumState::Encode(ByteWriter& w) const {
  char bytes[kMaxEncodedBytes];
  w.Bytes(std::string_view(bytes, static_cast<size_t>(EncodeTo(bytes) - bytes)));
}

Status SumState::Decode(ByteReader& r) {
  auto corrupt = [] { return Status::Corrupt("sum: bad or truncated state"); };
  const uint64_t skipped = r.Varint();
  const uint64_t n = r.Varint();
  uint8_t flags = 0;
  WideSum wide;
  double sum = 0, correction = 0;
  if (n > 0) {
    flags = r.U8();
    if (!r.ok() || (flags & ~(kFloatResult | kHasIntegerPart)) != 0) return corrupt();
    if ((flags & kHasIntegerPart) != 0 && (!wide.Decode(r, n) || wide.total() == 0)) return corrupt();
    if ((flags & kFloatResult) != 0) {
      sum = r.F64();
      correction = r.F64();
    }
  }
  if (!r.ok()) return corrupt();
  // The correction only stops being finite once the sum has overflowed or
  // met an infinity (t = +-inf above), so a finite sum needs a finite one.
  if (std::isfinite(sum) && !std::isfinite(correction))
    return Status::Corrupt("sum: correction not finite beside a finite sum");
  n_ = n;
  skipped_ = skipped;
  float_result_ = (flags & kFloatResult) != 0;
  wide_ = wide;
  sum_ = sum;
  correction_ = correction;
  return Status::Ok();
}

void SumState::Finalize(std::vector<Cell>* out) const {
  if (n_ == 0)
    out->push_back(Cell::Null());
  else if (!float_result_)
    out->push_back(Cell::Int(wide_.total()));
  else
    out->push_back(Cell::Float(Result()));
}

}  // namespace fanfold
