#include "common/base/value_key.h"

// XXH3 compiled into this file (the same algorithm as the library's, which
// the other files call): HashValueKey runs once per value a hyperloglog
// takes, and the library call costs as much as hashing a short string.
#define XXH_INLINE_ALL
#include <xxhash.h>

#include <bit>
#include <climits>
#include <cmath>
#include <cstdint>
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

constexpr int kResidualBias = 32768;
constexpr size_t kNumberPayload = 10;  // the double's image and the residual

// The nearest double of a number and what the exact value exceeds it by.
// Doubles are exact (residual 0); integers round to nearest.
void NumberParts(const Value& v, double* d, int* residual) {
  if (!v.is_integer()) {
    *d = CanonicalDouble(v.number);
    *residual = 0;
    return;
  }
  const WideInt w = v.Wide();
  *d = static_cast<double>(w);
  *residual = static_cast<int>(w - static_cast<WideInt>(*d));
}

void PutNumberPayload(const Value& v, char* p) {
  double d;
  int residual;
  NumberParts(v, &d, &residual);
  PutBigEndian(OrderedBits(d), p);
  const unsigned biased = static_cast<unsigned>(residual + kResidualBias);
  p[8] = static_cast<char>(biased >> 8);
  p[9] = static_cast<char>(biased & 0xff);
}

int GetResidual(const char* p) {
  return static_cast<int>((static_cast<unsigned>(static_cast<uint8_t>(p[0])) << 8) |
                          static_cast<uint8_t>(p[1])) -
         kResidualBias;
}

// The exact integer d + residual when it is one within [-2^63, 2^64).
bool ExactInteger(double d, int residual, WideInt* out) {
  constexpr double kTwo64 = 18446744073709551616.0;
  if (!(d >= -kTwo64 && d <= kTwo64) || std::floor(d) != d) return false;
  const WideInt w = static_cast<WideInt>(d) + residual;
  if (w < static_cast<WideInt>(INT64_MIN) || w > static_cast<WideInt>(UINT64_MAX)) return false;
  *out = w;
  return true;
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
      char buf[1 + kNumberPayload];
      buf[0] = kValueKeyNumber;
      PutNumberPayload(v, buf + 1);
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
      char buf[kNumberPayload];
      PutNumberPayload(v, buf);
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
      if (key.size() != 1 + kNumberPayload) return false;
      const double d = FromOrderedBits(GetBigEndian(key.data() + 1));
      if (std::bit_cast<uint64_t>(d) != std::bit_cast<uint64_t>(CanonicalDouble(d))) return false;
      const int residual = GetResidual(key.data() + 9);
      if (residual == 0) return true;
      // Canonical: d is the nearest double of the exact integer d + residual.
      WideInt w;
      return ExactInteger(d, residual, &w) && static_cast<double>(w) == d;
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
    case kValueKeyNumber: {
      const double d = FromOrderedBits(GetBigEndian(key.data() + 1));
      WideInt w;
      if (ExactInteger(d, GetResidual(key.data() + 9), &w)) return Cell::Int(w);
      return Cell::Float(d);
    }
    default:
      return Cell::String(std::string(key.substr(1)));
  }
}

}  // namespace fanfold
