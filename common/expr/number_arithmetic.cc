#include "common/expr/number_arithmetic.h"

#include <cmath>

namespace fanfold {
namespace {

using UWide = unsigned __int128;

Value Finite(double d) { return std::isfinite(d) ? Value::Number(d) : Value::Missing(); }

// The product of two integers in [-2^63, 2^64): exact when it fits a WideInt,
// else the nearest double of the exact product (|x|, |y| < 2^64, so the
// product of the magnitudes fits an unsigned 128-bit integer).
Value MultiplyIntegers(WideInt x, WideInt y) {
  WideInt product;
  if (!__builtin_mul_overflow(x, y, &product)) return Value::FromWide(product);
  const UWide mx = x < 0 ? -static_cast<UWide>(x) : static_cast<UWide>(x);
  const UWide my = y < 0 ? -static_cast<UWide>(y) : static_cast<UWide>(y);
  const double magnitude = static_cast<double>(mx * my);
  return Value::Number((x < 0) != (y < 0) ? -magnitude : magnitude);
}

}  // namespace

Value ApplyNumberOp(NumberOp op, const Value& x, const Value& y) {
  if (x.is_integer() && y.is_integer() && op != NumberOp::kDiv) {
    // Operands are within [-2^63, 2^64): sums and differences fit a WideInt.
    const WideInt a = x.Wide(), b = y.Wide();
    switch (op) {
      case NumberOp::kAdd: return Value::FromWide(a + b);
      case NumberOp::kSub: return Value::FromWide(a - b);
      case NumberOp::kMul: return MultiplyIntegers(a, b);
      default:  // kMod: the sign of the dividend, as fmod below
        if (b == 0) return Value::Missing();
        return Value::FromWide(a % b);
    }
  }
  const double a = x.number, b = y.number;
  switch (op) {
    case NumberOp::kAdd: return Finite(a + b);
    case NumberOp::kSub: return Finite(a - b);
    case NumberOp::kMul: return Finite(a * b);
    case NumberOp::kDiv: return b == 0 ? Value::Missing() : Finite(a / b);
    case NumberOp::kMod: return b == 0 ? Value::Missing() : Finite(std::fmod(a, b));
  }
  return Value::Missing();
}

Value NegateNumber(const Value& x) {
  if (x.is_integer()) return Value::FromWide(-x.Wide());
  return Finite(-x.number);
}

Value BucketStartOf(const Value& x, const Value& w) {
  if (x.is_integer() && w.is_integer()) {
    const WideInt a = x.Wide(), b = w.Wide();
    if (b <= 0) return Value::Missing();
    WideInt q = a / b;
    if (a % b != 0 && a < 0) --q;  // floor, not truncation
    return Value::FromWide(q * b);  // |q * b| <= |a| + b < 2^66: no overflow
  }
  const double a = x.number, b = w.number;
  if (!(b > 0)) return Value::Missing();
  return Finite(std::floor(a / b) * b);
}

}  // namespace fanfold
