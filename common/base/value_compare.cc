#include "common/base/value_compare.h"

#include <string_view>

namespace fanfold {
namespace {

// IEEE semantics: with a NaN only != holds.
bool Order(CompareOp op, double x, double y) {
  switch (op) {
    case CompareOp::kEq: return x == y;
    case CompareOp::kNe: return x != y;
    case CompareOp::kLt: return x < y;
    case CompareOp::kLe: return x <= y;
    case CompareOp::kGt: return x > y;
    case CompareOp::kGe: return x >= y;
  }
  return false;
}

bool OrderText(CompareOp op, std::string_view a, std::string_view b) {
  // std::char_traits<char>::compare orders bytes as unsigned char.
  const int c = a.compare(b);
  return Order(op, c, 0);
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
  double x, y;
  if (l.AsNumber(&x) && r.AsNumber(&y)) return Order(op, x, y);
  return CompareNonNumeric(op, l, r);
}

CompareConstant MakeCompareConstant(const Value& v) {
  CompareConstant c;
  c.value = v;
  c.numeric = v.AsNumber(&c.number);
  return c;
}

bool CompareToConstant(CompareOp op, const Value& l, const CompareConstant& c) {
  if (!l.is_present() || !c.value.is_present()) return false;
  if (c.numeric) {
    double x;
    if (l.kind == ValueKind::kNumber) return Order(op, l.number, c.number);
    if (l.AsNumber(&x)) return Order(op, x, c.number);
  }
  return CompareNonNumeric(op, l, c.value);
}

}  // namespace fanfold
