// ValueKey: the canonical byte form of a scalar Value used by the measures
// that count values (distinct, hyperloglog, top). A one-byte type tag
// keeps the number 1 and the string "1" apart; numbers are canonicalised
// (-0.0 == 0.0, one NaN; an integer and a double of equal value, 5 and 5.0,
// are one key) and stored order-preserving and exact, so comparing keys
// bytewise orders them bool < number < string, numbers numerically, strings
// bytewise. Free functions over caller-owned buffers; thread-safe.
#pragma once

#include <cstdint>
#include <functional>
#include <string>
#include <string_view>

#include "common/base/cell.h"
#include "common/base/value.h"

namespace fanfold {

// Key layout (docs/measures.md):
//   'b' u8(0|1)                      bool
//   'n' 8 bytes, big-endian, order-preserving image of the canonical nearest
//       double d, then 2 bytes, big-endian: the residual (exact value - d)
//       plus 32768. The residual is 0 for every double; for an integer in
//       [-2^63, 2^64) it lies in [-1024, 1024] (half the spacing of doubles
//       below 2^64), so equal doubles order by residual, i.e. numerically.
//   's' the string's bytes           string (any length, may be empty)
inline constexpr char kValueKeyBool = 'b';
inline constexpr char kValueKeyNumber = 'n';
inline constexpr char kValueKeyString = 's';

// True iff v is a countable scalar: bool, number or string.
inline bool IsCountable(const Value& v) {
  return v.kind == ValueKind::kBool || v.kind == ValueKind::kNumber || v.kind == ValueKind::kString;
}

// Returns true iff v is a countable scalar (bool, number, string); then
// replaces *out with v's key. out's capacity is reused, so a warm buffer
// makes this allocation-free.
bool MakeValueKey(const Value& v, std::string* out);

// 64-bit hash of v's key (XXH3 of the key's payload, seeded by the type tag,
// so no key needs to be built; 5 and 5.0 hash alike). REQUIRES: v is a countable scalar (MakeValueKey would succeed).
uint64_t HashValueKey(const Value& v);

// Returns true iff key is a well-formed, canonical key as MakeValueKey makes.
bool IsValidValueKey(std::string_view key);

// The output form of a key: Bool, Int (an integral number within
// [-2^63, 2^64), whatever its representation was), Float or String cell.
// REQUIRES: IsValidValueKey(key).
Cell ValueKeyToCell(std::string_view key);

// Lets hash containers keyed by std::string be probed with a string_view
// key, so lookups of a key built in a reused buffer allocate nothing.
struct TransparentStringHash {
  using is_transparent = void;
  size_t operator()(std::string_view s) const { return std::hash<std::string_view>{}(s); }
};

// Canonical double: -0.0 becomes 0.0, every NaN one quiet NaN.
double CanonicalDouble(double d);

}  // namespace fanfold
