#include "common/base/value_compare.h"

#include <cmath>
#include <string_view>

namespace fanfold {
namespace {

// The answer of `op` given the order c of its operands (-1, 0, 1 or
// kUnordered); unordered (IEEE 754 NaN) satisfies only !=.
bool Holds(CompareOp op, int c) {
  if (c == kUnordered) return op == CompareOp::kNe;
  switch (op) {
    case CompareOp::kEq: return c == 0;
    case CompareOp::kNe: return c != 0;
    case CompareOp::kLt: return c < 0;
    case CompareOp::kLe: return c <= 0;
    case CompareOp::kGt: return c > 0;
    case CompareOp::kGe: return c >= 0;
  }
  return false;
}

bool OrderText(CompareOp op, std::string_view a, std::string_view b) {
  // std::char_traits<char>::compare orders bytes as unsigned char.
  const int c = a.compare(b);
  return Holds(op, c < 0 ? -1 : (c > 0 ? 1 : 0));
}

// Both present, not both numeric.
bool CompareNonNumeric(CompareOp op, const Value& l, const Value& r) {
  if (l.kind == ValueKind::kString && r.kind == ValueKind::kString) return OrderText(op, l.str, r.str);
  if (op == CompareOp::kEq || op == CompareOp::kNe) {
    const bool equal =
        l.kind == ValueKind::kBool && r.kind == ValueKind::kBool && l.boolean == r.boolean;
    return equal == (op == CompareOp::kEq);
  }
  return false;
}

}  // namespace

int CompareWideToDouble(WideInt w, double d) {
  if (std::isnan(d)) return kUnordered;
  // The common case: w is exact as a double, so the double order is exact.
  constexpr WideInt kTwo53 = WideInt{1} << 53;
  if (w >= -kTwo53 && w <= kTwo53) {
    const double x = static_cast<double>(w);
    return x < d ? -1 : (x > d ? 1 : 0);
  }
  // 2^127 bounds every WideInt; beyond it (infinities included) the double wins.
  constexpr double kTwo127 = 170141183460469231731687303715884105728.0;
  if (d >= kTwo127) return -1;
  if (d < -kTwo127) return 1;
  // floor(d) is an integer in [-2^127, 2^127): exact as a WideInt.
  const double f = std::floor(d);
  const WideInt fi = static_cast<WideInt>(f);
  if (w < fi) return -1;
  if (w > fi) return 1;
  return d > f ? -1 : 0;  // w == floor(d): less iff d has a fraction
}

int CompareNumbers(const Value& a, const Value& b) {
  if (a.is_integer()) {
    if (b.is_integer()) {
      const WideInt x = a.Wide(), y = b.Wide();
      return x < y ? -1 : (x > y ? 1 : 0);
    }
    return CompareWideToDouble(a.Wide(), b.number);
  }
  if (b.is_integer()) {
    const int c = CompareWideToDouble(b.Wide(), a.number);
    return c == kUnordered ? c : -c;
  }
  const double x = a.number, y = b.number;
  if (x < y) return -1;
  if (x > y) return 1;
  return x == y ? 0 : kUnordered;
}

CompareOp MirrorCompareOp(CompareOp op) {
  switch (op) {
    case CompareOp::kLt: return CompareOp::kGt;
    case CompareOp::kLe: return CompareOp::kGe;
    case CompareOp::kGt: return CompareOp::kLt;
    case CompareOp::kGe: return CompareOp::kLe;
    default: return op;
  }
}

bool CompareValues(CompareOp op, const Value& l, const Value& r) {
  if (!l.is_present() || !r.is_present()) return false;
  Value x, y;
  if (l.AsNumeric(&x) && r.AsNumeric(&y)) return Holds(op, CompareNumbers(x, y));
  return CompareNonNumeric(op, l, r);
}

CompareConstant MakeCompareConstant(const Value& v) {
  CompareConstant c;
  c.value = v;
  c.numeric = v.AsNumeric(&c.number);
  return c;
}

bool CompareToConstant(CompareOp op, const Value& l, const CompareConstant& c) {
  if (!l.is_present() || !c.value.is_present()) return false;
  if (c.numeric) {
    if (l.kind == ValueKind::kNumber) {
      // The common case, two doubles, without the exact machinery.
      if (!l.is_integer() && !c.number.is_integer()) {
        const double x = l.number, y = c.number.number;
        return Holds(op, x < y ? -1 : (x > y ? 1 : (x == y ? 0 : kUnordered)));
      }
      return Holds(op, CompareNumbers(l, c.number));
    }
    Value x;
    if (l.AsNumeric(&x)) return Holds(op, CompareNumbers(x, c.number));
  }
  return CompareNonNumeric(op, l, c.value);
}

}  // namespace fanfold
