// NumberArithmetic: the arithmetic of the expression language on kNumber
// Values. Two integers add, subtract, multiply, take remainders and negate
// exactly (in WideInt); a result outside [-2^63, 2^64) becomes its nearest
// double (Value::FromWide). Any double operand makes it double arithmetic;
// `/` is always the double quotient. Pure functions; thread-safe.
#pragma once

#include <cstdint>

#include "common/base/value.h"

namespace fanfold {

enum class NumberOp : uint8_t { kAdd, kSub, kMul, kDiv, kMod };

// Returns x op y, or Missing iff y is zero for / and %, or the result is not
// finite (overflow to infinity, an infinite or NaN operand).
// REQUIRES: x and y are kNumber.
Value ApplyNumberOp(NumberOp op, const Value& x, const Value& y);

// Returns -x (exact for integers: -(-2^63) is 2^63), or Missing iff x is not
// finite. REQUIRES: x is kNumber.
Value NegateNumber(const Value& x);

// floor(x / w) * w: the start of x's bucket of width w, exact when both are
// integers. Returns Missing iff w <= 0 or NaN, or the result is not finite.
// REQUIRES: x and w are kNumber.
Value BucketStartOf(const Value& x, const Value& w);

}  // namespace fanfold
