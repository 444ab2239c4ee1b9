// Value: one scalar seen while evaluating a record — a field read by a reader,
// or the result of an expression. Strings are views: into the record buffer
// (valid until the reader moves to the next record) or into a ScratchArena
// (valid until the arena is reset). Values never own memory, so evaluating a
// record allocates nothing. Plain data; thread-compatible.
#pragma once

#include <charconv>
#include <cmath>
#include <cstdint>
#include <string_view>

namespace fanfold {

enum class ValueKind : uint8_t {
  kMissing = 0,  // field absent (or empty CSV cell)
  kNull = 1,     // JSON null
  kBool = 2,
  kNumber = 3,   // IEEE 754 double
  kString = 4,
  kOther = 5,    // a JSON object or array: present, but not a scalar
};

struct Value {
  ValueKind kind = ValueKind::kMissing;
  bool boolean = false;
  double number = 0;
  std::string_view str;

  static Value Missing() { return Value{}; }
  static Value Null() { return Value{ValueKind::kNull, false, 0, {}}; }
  static Value Bool(bool b) { return Value{ValueKind::kBool, b, 0, {}}; }
  static Value Number(double d) { return Value{ValueKind::kNumber, false, d, {}}; }
  static Value String(std::string_view s) { return Value{ValueKind::kString, false, 0, s}; }
  static Value Other() { return Value{ValueKind::kOther, false, 0, {}}; }

  bool is_missing() const { return kind == ValueKind::kMissing; }
  // "Present" means the record has something there other than null.
  bool is_present() const { return kind != ValueKind::kMissing && kind != ValueKind::kNull; }

  // Numeric view used by arithmetic and numeric measures: numbers as they are,
  // strings that parse completely as a finite decimal number (CSV cells,
  // "12.5"; not "nan" or "inf").
  // Returns true iff *out was set.
  bool AsNumber(double* out) const {
    if (kind == ValueKind::kNumber) {
      *out = number;
      return true;
    }
    if (kind != ValueKind::kString || str.empty()) return false;
    const char* b = str.data();
    const char* e = b + str.size();
    if (*b == '+') ++b;  // from_chars rejects a leading '+'
    auto [p, ec] = std::from_chars(b, e, *out);
    // from_chars also reads "nan" and "inf": text like that is not a number here.
    return ec == std::errc() && p == e && std::isfinite(*out);
  }

  // Truthiness used by filters: true, non-zero numbers and non-empty strings.
  bool Truthy() const {
    switch (kind) {
      case ValueKind::kBool: return boolean;
      case ValueKind::kNumber: return number != 0;
      case ValueKind::kString: return !str.empty();
      case ValueKind::kOther: return true;
      default: return false;
    }
  }
};

}  // namespace fanfold
