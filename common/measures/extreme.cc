#include "common/measures/extreme.h"

namespace fanfold {

Status ExtremeState::Merge(const MeasureState& other) {
  const auto* o = dynamic_cast<const ExtremeState*>(&other);
  if (o == nullptr || o->is_max_ != is_max_)
    return Status::Internal("min/max: merge with a state of another measure");
  if (o->has_) Offer(o->value_);
  skipped_ += o->skipped_;
  return Status::Ok();
}

void ExtremeState::Encode(ByteWriter& w) const {
  w.Varint(skipped_);
  w.U8(has_ ? 1 : 0);
  if (has_) NumberEncoding::Write(value_, w);
}

Status ExtremeState::Decode(ByteReader& r) {
  const uint64_t skipped = r.Varint();
  const uint8_t has = r.U8();
  Value value;
  // Add never stores NaN or -0.0 (see the header), so neither can be ours.
  if (!r.ok() || has > 1 || (has == 1 && !NumberEncoding::Read(r.U8(), r, /*any_double=*/false, &value)))
    return Status::Corrupt("min/max: bad, non-canonical or truncated state");
  skipped_ = skipped;
  has_ = has == 1;
  value_ = value;
  return Status::Ok();
}

void ExtremeState::Finalize(std::vector<Cell>* out) const {
  out->push_back(has_ ? NumberEncoding::ToCell(value_) : Cell::Null());
}

}  // namespace fanfold
