#include "common/base/number_encoding.h"

#include <bit>
#include <cmath>

namespace fanfold {

void NumberEncoding::Write(const Value& v, ByteWriter& w) {
  switch (v.rep) {
    case NumberRep::kInt64:
      w.U8(kInt64);
      w.U64(v.bits);
      break;
    case NumberRep::kUint64:
      w.U8(kUint64);
      w.U64(v.bits);
      break;
    default:
      w.U8(kDouble);
      w.F64(v.number);
      break;
  }
}

bool NumberEncoding::Read(uint8_t tag, ByteReader& r, bool any_double, Value* out) {
  const uint64_t bits = r.U64();
  if (!r.ok()) return false;
  switch (tag) {
    case kInt64:
      *out = Value::Int(static_cast<int64_t>(bits));
      return true;
    case kUint64:
      if (bits <= static_cast<uint64_t>(INT64_MAX)) return false;  // Uint would make it kInt64
      *out = Value::Uint(bits);
      return true;
    case kDouble: {
      const double d = std::bit_cast<double>(bits);
      if (!any_double && (std::isnan(d) || bits == std::bit_cast<uint64_t>(-0.0))) return false;
      *out = Value::Number(d);
      return true;
    }
    default:
      return false;
  }
}

}  // namespace fanfold
