#include "common/input/json_number.h"

#include <charconv>
#include <cstddef>
#include <climits>
#include <cstdint>
#include <limits>

namespace fanfold {
namespace {

bool IsDigit(char c) { return c >= '0' && c <= '9'; }

// The parts of a JSON number token (RFC 8259 section 6 grammar:
// -? (0 | [1-9][0-9]*) (. [0-9]+)? ([eE] [+-]? [0-9]+)?).
struct NumberParts {
  bool negative = false;
  const char* int_begin = nullptr;
  const char* int_end = nullptr;
  const char* frac_begin = nullptr;
  const char* frac_end = nullptr;
  bool has_exponent = false;
  int64_t exponent = 0;  // saturated far past any double's range
};

// Splits text into *parts; returns false iff it is not a JSON number.
bool SplitJsonNumber(std::string_view text, NumberParts* parts) {
  const char* b = text.data();
  const char* e = b + text.size();
  const char* p = b;
  NumberParts& n = *parts;
  n.negative = p < e && *p == '-';
  if (n.negative) ++p;
  n.int_begin = p;
  if (p == e || !IsDigit(*p)) return false;
  if (*p == '0')
    ++p;
  else
    while (p < e && IsDigit(*p)) ++p;
  n.int_end = p;
  n.frac_begin = p;
  n.frac_end = p;
  if (p < e && *p == '.') {
    n.frac_begin = ++p;
    while (p < e && IsDigit(*p)) ++p;
    if (p == n.frac_begin) return false;
    n.frac_end = p;
  }
  if (p < e && (*p == 'e' || *p == 'E')) {
    n.has_exponent = true;
    ++p;
    bool exp_negative = false;
    if (p < e && (*p == '+' || *p == '-')) exp_negative = *p++ == '-';
    if (p == e || !IsDigit(*p)) return false;
    for (; p < e && IsDigit(*p); ++p) {
      if (n.exponent < 1000000) n.exponent = n.exponent * 10 + (*p - '0');
    }
    if (exp_negative) n.exponent = -n.exponent;
  }
  return p == e;
}

}  // namespace

bool IsJsonNumber(std::string_view text) {
  NumberParts parts;
  return SplitJsonNumber(text, &parts);
}

namespace {

// The commonest tokens in one pass: -?(0|[1-9][0-9]*) with at most 18
// digits (an exact int64), or that with a fraction (\.[0-9]+) and at most
// 15 digits in all (Clinger's fast path below, without an exponent).
// Returns false, *out untouched, for every other token, valid or not.
bool ParseShortJsonNumber(const char* p, const char* e, Value* out) {
  static constexpr double kPow10[] = {1e0, 1e1, 1e2,  1e3,  1e4,  1e5,  1e6,  1e7,
                                      1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15};
  const bool negative = p < e && *p == '-';
  if (negative) ++p;
  // One pass over at most 18 bytes (18 digits, or 15 digits and a point):
  // each byte is a digit, taken into m, or the one point. 18 digits stay
  // below 2^64, so m cannot overflow.
  const ptrdiff_t n = e - p;
  if (n == 0 || n > 18) return false;
  uint64_t m = 0;
  const char* dot = nullptr;
  for (const char* c = p; c < e; ++c) {
    const unsigned d = static_cast<unsigned>(static_cast<unsigned char>(*c)) - '0';
    if (d <= 9) {
      m = m * 10 + d;
    } else if (*c == '.' && dot == nullptr) {
      dot = c;
    } else {
      return false;
    }
  }
  const ptrdiff_t int_digits = (dot != nullptr ? dot : e) - p;
  if (int_digits == 0 || (int_digits > 1 && *p == '0')) return false;
  if (dot == nullptr) {
    *out = Value::Int(negative ? -static_cast<int64_t>(m) : static_cast<int64_t>(m));
    return true;
  }
  const ptrdiff_t frac_digits = e - dot - 1;
  if (frac_digits == 0 || int_digits + frac_digits > 15) return false;
  const double d = static_cast<double>(m) / kPow10[frac_digits];
  *out = Value::Number(negative ? -d : d);
  return true;
}

// Every token ParseShortJsonNumber leaves: kept out of line, so that the
// short path saves no registers for it.
[[gnu::noinline]] bool ParseLongJsonNumber(std::string_view text, Value* out) {
  NumberParts n;
  if (!SplitJsonNumber(text, &n)) return false;
  const char* b = text.data();
  const char* e = b + text.size();
  if (!n.has_exponent && n.frac_begin == n.frac_end) {
    // An integer: exact within [-2^63, 2^64), the nearest double beyond.
    uint64_t magnitude = 0;
    auto [q, ec] = std::from_chars(n.int_begin, n.int_end, magnitude);
    if (ec == std::errc() && q == n.int_end) {
      if (!n.negative) {
        *out = Value::Uint(magnitude);
        return true;
      }
      if (magnitude <= static_cast<uint64_t>(INT64_MAX) + 1) {
        *out = Value::FromWide(-static_cast<WideInt>(magnitude));
        return true;
      }
    }
  }
  // Clinger's fast path (W. D. Clinger, "How to read floating point numbers
  // accurately", PLDI 1990): digits that fit 2^53 scaled by 10^k, |k| <= 22,
  // are two exact doubles and one correctly rounded operation.
  static constexpr double kPow10[] = {1e0,  1e1,  1e2,  1e3,  1e4,  1e5,  1e6,  1e7,  1e8,  1e9,  1e10, 1e11,
                                      1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22};
  const size_t int_digits = static_cast<size_t>(n.int_end - n.int_begin);
  const size_t frac_digits = static_cast<size_t>(n.frac_end - n.frac_begin);
  if (int_digits + frac_digits <= 15) {  // 10^15 < 2^53
    uint64_t m = 0;
    for (const char* c = n.int_begin; c < n.int_end; ++c) m = m * 10 + static_cast<uint64_t>(*c - '0');
    for (const char* c = n.frac_begin; c < n.frac_end; ++c) m = m * 10 + static_cast<uint64_t>(*c - '0');
    const int64_t k = n.exponent - static_cast<int64_t>(frac_digits);
    if (k >= -22 && k <= 22) {
      double d = static_cast<double>(m);
      d = k < 0 ? d / kPow10[-k] : d * kPow10[k];
      *out = Value::Number(n.negative ? -d : d);
      return true;
    }
  }
  double d = 0;
  auto [q, ec] = std::from_chars(b, e, d);  // correctly rounded, no locale
  if (ec == std::errc::result_out_of_range) {
    // Overflow or underflow: which one the decimal exponent of the first
    // significant digit says (digits d.ddd x 10^k with k > 308 overflow).
    int64_t k = n.exponent;
    const char* first = n.int_begin;
    while (first < n.int_end && *first == '0') ++first;
    if (first < n.int_end) {
      k += (n.int_end - first) - 1;
    } else {
      const char* f = n.frac_begin;
      while (f < n.frac_end && *f == '0') ++f;
      k -= (f - n.frac_begin) + 1;
    }
    d = k > 0 ? std::numeric_limits<double>::infinity() : 0.0;
    if (n.negative) d = -d;
  } else if (ec != std::errc() || q != e) {
    return false;
  }
  *out = Value::Number(d);
  return true;
}

}  // namespace

bool ParseJsonNumber(std::string_view text, Value* out) {
  return ParseShortJsonNumber(text.data(), text.data() + text.size(), out) || ParseLongJsonNumber(text, out);
}

}  // namespace fanfold
