// ValueCompare: the comparison rules of the expression language, shared by
// the evaluator and anything else that must agree with it. Numbers (and
// numeric text, via Value::AsNumeric) compare numerically and exactly when
// both sides are numeric; two strings otherwise compare bytewise; == and !=
// also compare two bools. Any comparison with a missing or null side is
// false, != included. Pure functions; thread-safe.
#pragma once

#include <cstdint>

#include "common/base/value.h"

namespace fanfold {

enum class CompareOp : uint8_t { kEq, kNe, kLt, kLe, kGt, kGe };

// The op that gives the same answer with the operands swapped (< becomes >).
CompareOp MirrorCompareOp(CompareOp op);

// Exact order of an integer and a double, as mathematics (and Python's int
// against float) has it: 2^53 + 1 > 2^53 as a double. Returns -1, 0 or 1, or
// kUnordered iff d is NaN.
inline constexpr int kUnordered = 2;
int CompareWideToDouble(WideInt w, double d);

// Exact order of two kNumber values (integers exactly, integer against
// double exactly, doubles by IEEE 754). Returns -1, 0, 1 or kUnordered (a NaN).
// REQUIRES: both are kNumber.
int CompareNumbers(const Value& a, const Value& b);

// Returns the truth of `l op r` under the rules above. Values of different
// kinds that neither rule covers (a bool and a number, an object and
// anything) are unequal and unordered: == and ordering give false, != true.
bool CompareValues(CompareOp op, const Value& l, const Value& r);

// A constant right-hand side, with its numeric view worked out once.
struct CompareConstant {
  Value value;
  bool numeric = false;  // value.AsNumeric succeeded
  Value number;          // ... giving this kNumber
};
CompareConstant MakeCompareConstant(const Value& v);

// Same answer as CompareValues(op, l, c.value), faster: a non-numeric
// constant skips the number parse of l.
bool CompareToConstant(CompareOp op, const Value& l, const CompareConstant& c);

}  // namespace fanfold
