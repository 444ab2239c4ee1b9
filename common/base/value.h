// Value: one scalar seen while evaluating a record — a field read by a reader,
// or the result of an expression. Strings are views: into the record buffer
// (valid until the reader moves to the next record) or into a ScratchArena
// (valid until the arena is reset). Values never own memory, so evaluating a
// record allocates nothing. Plain data; thread-compatible.
//
// Numbers are exact where the input is: a JSON integer or an integer text in
// [-2^63, 2^64-1] is a number whose `rep` says it is an integer (int64 or, above
// INT64_MAX, uint64), held exactly in `bits`; `number` is always its nearest
// double, so code that only needs a double reads `number` as before.
//
// A string may carry its own numeric reading (ReadTextNumber): AsNumeric's
// result for its text, kept in `rep`, `bits` and `number`, which a string
// does not otherwise use. Copies keep it, so a CSV cell read by several
// numeric measures is parsed once; AsNumber and AsNumeric answer from it
// exactly as they would from the text.
#pragma once

#include <charconv>
#include <cmath>
#include <climits>
#include <cstdint>
#include <string_view>

namespace fanfold {

enum class ValueKind : uint8_t {
  kMissing = 0,  // field absent (or empty CSV cell)
  kNull = 1,     // JSON null
  kBool = 2,
  kNumber = 3,   // a number: IEEE 754 double, or an exact integer (see NumberRep)
  kString = 4,
  kOther = 5,    // a JSON object or array: present, but not a scalar
};

// How a kNumber holds its exact value. Canonical: kUint64 only above INT64_MAX.
enum class NumberRep : uint8_t {
  kDouble = 0,  // `number` is the value
  kInt64 = 1,   // static_cast<int64_t>(bits) is the value; `number` its nearest double
  kUint64 = 2,  // bits is the value (> INT64_MAX); `number` its nearest double
};

// What a string's `rep`, `bits` and `number` hold (Value::ReadTextNumber).
enum class TextNumber : uint8_t {
  kUnread = 0,     // nothing: the text is parsed when asked
  kNumber = 1,     // AsNumeric's result for the text
  kNotNumber = 2,  // the text is no number (AsNumber and AsNumeric fail)
};

// The widest exact integer arithmetic works in: every int64 and uint64, and
// their sums, differences and products, without overflow.
using WideInt = __int128;

struct Value {
  ValueKind kind = ValueKind::kMissing;
  bool boolean = false;
  NumberRep rep = NumberRep::kDouble;
  // kString only: what rep, bits and number hold (ReadTextNumber). In the
  // padding before `number`, so a Value stays 40 bytes.
  TextNumber text_number = TextNumber::kUnread;
  double number = 0;
  uint64_t bits = 0;
  std::string_view str;

  static Value Missing() { return Value{}; }
  static Value Null() { return Make(ValueKind::kNull); }
  static Value Bool(bool b) {
    Value v = Make(ValueKind::kBool);
    v.boolean = b;
    return v;
  }
  static Value Number(double d) {
    Value v = Make(ValueKind::kNumber);
    v.number = d;
    return v;
  }
  static Value Int(int64_t i) {
    Value v = Make(ValueKind::kNumber);
    v.rep = NumberRep::kInt64;
    v.bits = static_cast<uint64_t>(i);
    v.number = static_cast<double>(i);
    return v;
  }
  static Value Uint(uint64_t u) {
    if (u <= static_cast<uint64_t>(INT64_MAX)) return Int(static_cast<int64_t>(u));
    Value v = Make(ValueKind::kNumber);
    v.rep = NumberRep::kUint64;
    v.bits = u;
    v.number = static_cast<double>(u);
    return v;
  }
  // The exact integer w when it lies in [-2^63, 2^64-1]; beyond, the nearest
  // double (the documented overflow rule of integer arithmetic).
  static Value FromWide(WideInt w) {
    if (w >= INT64_MIN && w <= INT64_MAX) return Int(static_cast<int64_t>(w));
    if (w > 0 && w <= static_cast<WideInt>(UINT64_MAX)) return Uint(static_cast<uint64_t>(w));
    return Number(static_cast<double>(w));
  }
  static Value String(std::string_view s) {
    Value v = Make(ValueKind::kString);
    v.str = s;
    return v;
  }
  static Value Other() { return Make(ValueKind::kOther); }

  // True iff this is a number held as an exact integer.
  bool is_integer() const { return kind == ValueKind::kNumber && rep != NumberRep::kDouble; }
  // The exact integer. REQUIRES: is_integer().
  WideInt Wide() const {
    return rep == NumberRep::kUint64 ? static_cast<WideInt>(bits)
                                     : static_cast<WideInt>(static_cast<int64_t>(bits));
  }

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
    if (text_number == TextNumber::kNumber) {
      // The one text whose AsNumber differs from its AsNumeric's `number`:
      // a negative integer zero ("-0", "-000") reads as -0.0 here.
      *out = rep != NumberRep::kDouble && bits == 0 && str[0] == '-' ? -0.0 : number;
      return true;
    }
    if (text_number == TextNumber::kNotNumber) return false;
    const char* b = str.data();
    const char* e = b + str.size();
    if (*b == '+' && ++b != e && *b == '-') return false;  // from_chars rejects a leading '+'; "+-5" is no number
    if (ShortDecimal(b, e, out)) return true;
    auto [p, ec] = std::from_chars(b, e, *out);
    // from_chars also reads "nan" and "inf": text like that is not a number here.
    return ec == std::errc() && p == e && std::isfinite(*out);
  }

  // The common CSV cell "-12.375": an optional '-', then digits with at
  // most one '.', 1 to 15 digits in all and no exponent. Its value is
  // m / 10^k for integers m < 2^53 and k <= 15, two exact doubles and one
  // correctly rounded division (Clinger, PLDI 1990), so it equals
  // from_chars's result. Returns false, *out untouched, for anything else.
  static bool ShortDecimal(const char* b, const char* e, double* out) {
    static constexpr double kPow10[] = {1e0, 1e1, 1e2,  1e3,  1e4,  1e5,  1e6,  1e7,
                                        1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15};
    const bool negative = b < e && *b == '-';
    if (negative) ++b;
    if (e - b > 16 || b == e) return false;
    uint64_t m = 0;
    int digits = 0, frac = -1;  // frac: digits after the '.', -1 before one
    for (const char* c = b; c < e; ++c) {
      if (*c >= '0' && *c <= '9') {
        m = m * 10 + static_cast<uint64_t>(*c - '0');
        ++digits;
        if (frac >= 0) ++frac;
      } else if (*c == '.' && frac < 0) {
        frac = 0;
      } else {
        return false;
      }
    }
    if (digits == 0 || digits > 15) return false;
    const double d = static_cast<double>(m) / kPow10[frac > 0 ? frac : 0];
    *out = negative ? -d : d;
    return true;
  }

  // Exact numeric view: numbers as they are; a string that is an optional
  // sign and decimal digits only, within [-2^63, 2^64-1], as that exact
  // integer; any other string AsNumber accepts as its double.
  // Returns true iff *out was set (to a kNumber).
  // The two common cases (a number, a string already read) inline; the
  // rest in AsNumericText.
  bool AsNumeric(Value* out) const {
    if (kind == ValueKind::kNumber) {
      *out = *this;
      return true;
    }
    if (kind == ValueKind::kString && text_number == TextNumber::kNumber) {
      *out = Make(ValueKind::kNumber);
      out->rep = rep;
      out->bits = bits;
      out->number = number;
      return true;
    }
    return AsNumericText(out);
  }
  // AsNumeric of any value but a number or a string read as one.
  [[gnu::noinline]] bool AsNumericText(Value* out) const {
    if (kind != ValueKind::kString || str.empty()) return false;
    if (text_number == TextNumber::kNumber) return AsNumeric(out);
    if (text_number == TextNumber::kNotNumber) return false;
    if (NumberRep r; ShortNumeric(str, &r, &out->bits, &out->number)) {
      out->kind = ValueKind::kNumber;
      out->boolean = false;
      out->rep = r;
      out->text_number = TextNumber::kUnread;
      out->str = {};
      return true;
    }
    const char* b = str.data();
    const char* e = b + str.size();
    const bool negative = *b == '-';
    if (*b == '+' || *b == '-') ++b;
    // Digits only: up to 19 of them fit a uint64 as they are read; longer
    // runs go to from_chars, which says whether they fit.
    uint64_t magnitude = 0;
    const char* p = b;
    while (p < e && p - b < 19 && static_cast<unsigned>(*p - '0') <= 9)
      magnitude = magnitude * 10 + static_cast<uint64_t>(*p++ - '0');
    bool digits_only = p == e && b != e;
    if (p < e && p - b == 19 && static_cast<unsigned>(*p - '0') <= 9) {
      auto [q, ec] = std::from_chars(b, e, magnitude);
      digits_only = ec == std::errc() && q == e;
    }
    if (digits_only) {
      if (!negative) {
        *out = Uint(magnitude);
        return true;
      }
      if (magnitude <= static_cast<uint64_t>(INT64_MAX) + 1) {
        *out = FromWide(-static_cast<WideInt>(magnitude));
        return true;
      }
    }
    double d = 0;
    if (!AsNumber(&d)) return false;
    *out = Number(d);
    return true;
  }

  // A string reads its text as AsNumeric would, once, and keeps the result
  // (text_number and, for a number, rep, bits and number): later AsNumber
  // and AsNumeric calls on it or its copies give the same answers without
  // parsing. No effect on any other value or a string already read.
  void ReadTextNumber() {
    if (kind != ValueKind::kString || text_number != TextNumber::kUnread) return;
    if (ShortNumeric(str, &rep, &bits, &number)) {
      text_number = TextNumber::kNumber;
      return;
    }
    Value n;
    if (!AsNumeric(&n)) {
      text_number = TextNumber::kNotNumber;
      return;
    }
    rep = n.rep;
    bits = n.bits;
    number = n.number;
    text_number = TextNumber::kNumber;
  }

  // AsNumeric's result for the common numeric text in one pass, as the
  // rep, bits and number of the kNumber it reads: an optional sign, then 1
  // to 15 digits with at most one '.' among them.
  // Without a '.' that is the exact integer AsNumeric reads (|m| < 10^15);
  // with one, AsNumber's ShortDecimal value (the same arithmetic: m / 10^k,
  // negated after the division). Returns false, writing nothing, for any
  // other text, which the general path then reads.
  static bool ShortNumeric(std::string_view s, NumberRep* rep, uint64_t* bits, double* number) {
    static constexpr double kPow10[] = {1e0, 1e1, 1e2,  1e3,  1e4,  1e5,  1e6,  1e7,
                                        1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15};
    const char* c = s.data();
    const char* const e = c + s.size();
    if (c == e || e - c > 17) return false;  // sign + 15 digits + '.' at most
    const bool negative = *c == '-';
    if (*c == '-' || *c == '+') ++c;
    // Digits, then iff a '.' follows, the digits after it.
    uint64_t m = 0;
    const char* const first = c;
    for (unsigned d; c < e && (d = static_cast<unsigned>(*c - '0')) <= 9; ++c) m = m * 10 + d;
    const char* dot = nullptr;
    if (c < e && *c == '.') {
      dot = c++;
      for (unsigned d; c < e && (d = static_cast<unsigned>(*c - '0')) <= 9; ++c) m = m * 10 + d;
    }
    // At most 17 bytes in all, so m cannot overflow before this check.
    const long digits = (c - first) - (dot != nullptr ? 1 : 0);
    if (c != e || digits == 0 || digits > 15) return false;
    if (dot == nullptr) {
      const int64_t i = negative ? -static_cast<int64_t>(m) : static_cast<int64_t>(m);
      *rep = NumberRep::kInt64;
      *bits = static_cast<uint64_t>(i);
      *number = static_cast<double>(i);
      return true;
    }
    const double d = static_cast<double>(m) / kPow10[e - dot - 1];
    *rep = NumberRep::kDouble;
    *bits = 0;
    *number = negative ? -d : d;
    return true;
  }

  // Truthiness used by filters: true, non-zero numbers and non-empty strings.
  bool Truthy() const {
    switch (kind) {
      case ValueKind::kBool: return boolean;
      case ValueKind::kNumber: return is_integer() ? bits != 0 : number != 0;
      case ValueKind::kString: return !str.empty();
      case ValueKind::kOther: return true;
      default: return false;
    }
  }

 private:
  static Value Make(ValueKind k) {
    Value v;
    v.kind = k;
    return v;
  }
};

// Values are copied per record and per measure argument: keep them small.
static_assert(sizeof(Value) <= 40, "Value grew past five words");

}  // namespace fanfold
