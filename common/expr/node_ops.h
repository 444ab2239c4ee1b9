// Expression node operations on already-evaluated operands: what one node of
// an Expr::Program computes from its kids' values. Shared by the recursive
// walk (Program::EvalAt) and the batch evaluator (Program::EvalBatch), so the
// two cannot disagree on an op. Stateless; thread-safe.
#pragma once

#include "common/expr/literal_set.h"
#include "common/expr/number_arithmetic.h"
#include "common/expr/program.h"

namespace fanfold {

// kAdd .. kMod on two operands: missing unless both are numbers or numeric
// text; overflow to infinity or NaN is missing too (ApplyNumberOp).
inline Value ArithmeticOf(ExprOp op, const Value& l, const Value& r) {
  Value x, y;
  if (!l.AsNumeric(&x) || !r.AsNumeric(&y)) return Value::Missing();
  NumberOp nop = NumberOp::kMod;
  switch (op) {
    case ExprOp::kAdd: nop = NumberOp::kAdd; break;
    case ExprOp::kSub: nop = NumberOp::kSub; break;
    case ExprOp::kMul: nop = NumberOp::kMul; break;
    case ExprOp::kDiv: nop = NumberOp::kDiv; break;
    default: break;
  }
  return ApplyNumberOp(nop, x, y);
}

// kNeg.
inline Value NegateOf(const Value& v) {
  Value x;
  if (!v.AsNumeric(&x)) return Value::Missing();
  return NegateNumber(x);
}

// kIn: v is present and in the set (or, negated, present and not in it).
inline Value InSetOf(const LiteralSet& set, bool negated, const Value& v) {
  return Value::Bool(v.is_present() && set.Contains(v) != negated);
}

// kTextEq: CompareToConstant for a string constant that is not numeric text:
// missing and null compare false; a string by its bytes; any other value is
// unequal.
inline Value TextEqOf(const ExprNode& n, const Value& v) {
  if (!v.is_present()) return Value::Bool(false);
  if (v.kind != ValueKind::kString) return Value::Bool(n.negated);
  return Value::Bool((v.str == n.constant.value.str) != n.negated);
}

}  // namespace fanfold
