#include "common/base/value_key.h"

#include <xxhash.h>

#include <bit>
#include <cmath>
#include <limits>

namespace fanfold {
namespace {

constexpr uint64_t kSignBit = uint64_t{1} << 63;

// Order-preserving map of double bits to unsigned integers: negative numbers
// have all bits flipped, non-negative ones only the sign bit.
uint64_t OrderedBits(double d) {
  uint64_t b = std::bit_cast<uint64_t>(d);
  return (b & kSignBit) ? ~b : (b | kSignBit);
}

double FromOrderedBits(uint64_t o) {
  uint64_t b = (o & kSignBit) ? (o & ~kSignBit) : ~o;
  return std::bit_cast<double>(b);
}

void PutBigEndian(uint64_t v, char* p) {
  for (int i = 7; i >= 0; --i) {
    p[i] = static_cast<char>(v & 0xff);
    v >>= 8;
  }
}

uint64_t GetBigEndian(const char* p) {
  uint64_t v = 0;
  for (int i = 0; i < 8; ++i) v = (v << 8) | static_cast<uint8_t>(p[i]);
  return v;
}

}  // namespace

double CanonicalDouble(double d) {
  if (std::isnan(d)) return std::numeric_limits<double>::quiet_NaN();
  return d == 0 ? 0.0 : d;
}

bool MakeValueKey(const Value& v, std::string* out) {
  switch (v.kind) {
    case ValueKind::kBool:
      out->assign(1, kValueKeyBool);
      out->push_back(v.boolean ? 1 : 0);
      return true;
    case ValueKind::kNumber: {
      char buf[9];
      buf[0] = kValueKeyNumber;
      PutBigEndian(OrderedBits(CanonicalDouble(v.number)), buf + 1);
      out->assign(buf, sizeof buf);
      return true;
    }
    case ValueKind::kString:
      out->assign(1, kValueKeyString);
      out->append(v.str.data(), v.str.size());
      return true;
    default:
      return false;
  }
}

uint64_t HashValueKey(const Value& v) {
  switch (v.kind) {
    case ValueKind::kBool: {
      const char b = v.boolean ? 1 : 0;
      return XXH3_64bits_withSeed(&b, 1, kValueKeyBool);
    }
    case ValueKind::kNumber: {
      char buf[8];
      PutBigEndian(OrderedBits(CanonicalDouble(v.number)), buf);
      return XXH3_64bits_withSeed(buf, sizeof buf, kValueKeyNumber);
    }
    default:
      return XXH3_64bits_withSeed(v.str.data(), v.str.size(), kValueKeyString);
  }
}

bool IsValidValueKey(std::string_view key) {
  if (key.empty()) return false;
  switch (key[0]) {
    case kValueKeyBool:
      return key.size() == 2 && (key[1] == 0 || key[1] == 1);
    case kValueKeyNumber: {
      if (key.size() != 9) return false;
      const double d = FromOrderedBits(GetBigEndian(key.data() + 1));
      return std::bit_cast<uint64_t>(d) == std::bit_cast<uint64_t>(CanonicalDouble(d));
    }
    case kValueKeyString:
      return true;
    default:
      return false;
  }
}

Cell ValueKeyToCell(std::string_view key) {
  switch (key[0]) {
    case kValueKeyBool:
      return Cell::Bool(key[1] != 0);
    case kValueKeyNumber:
      return Cell::Float(FromOrderedBits(GetBigEndian(key.data() + 1)));
    default:
      return Cell::String(std::string(key.substr(1)));
  }
}

}  // namespace fanfold
