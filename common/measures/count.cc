#include "common/measures/count.h"

#include <cstdint>
#include <limits>

namespace fanfold {

void CountState::Encode(ByteWriter& w) const { w.Varint(n_); }

Status CountState::Decode(ByteReader& r) {
  const uint64_t n = r.Varint();
  // Int cells are signed: a count past INT64_MAX cannot have been made.
  if (!r.ok() || n > static_cast<uint64_t>(std::numeric_limits<int64_t>::max()))
    return Status::Corrupt("count: bad or truncated state");
  n_ = n;
  return Status::Ok();
}

void CountState::Finalize(std::vector<Cell>* out) const {
  out->push_back(Cell::Int(static_cast<int64_t>(n_)));
}

}  // namespace fanfold
