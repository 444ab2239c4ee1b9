#include "common/expr/program.h"

#include <cmath>

namespace fanfold {
namespace {

Value Arithmetic(ExprOp op, const Value& l, const Value& r) {
  double x, y;
  if (!l.AsNumber(&x) || !r.AsNumber(&y)) return Value::Missing();
  double z;
  switch (op) {
    case ExprOp::kAdd: z = x + y; break;
    case ExprOp::kSub: z = x - y; break;
    case ExprOp::kMul: z = x * y; break;
    case ExprOp::kDiv:
      if (y == 0) return Value::Missing();
      z = x / y;
      break;
    default:  // kMod
      if (y == 0) return Value::Missing();
      z = std::fmod(x, y);
      break;
  }
  // Overflow to infinity (or NaN from "nan" text) has no place in a group
  // key or a sum; treat it like any other unusable number.
  return std::isfinite(z) ? Value::Number(z) : Value::Missing();
}

}  // namespace

Value Expr::Program::EvalAt(int32_t index, const Value* slots, ScratchArena* arena) const {
  const ExprNode& n = nodes[index];
  switch (n.op) {
    case ExprOp::kConst: return n.constant.value;
    case ExprOp::kSlot: return slots[n.slot];
    case ExprOp::kAnd:
      return Value::Bool(Kid(n, 0, slots, arena).Truthy() && Kid(n, 1, slots, arena).Truthy());
    case ExprOp::kOr:
      return Value::Bool(Kid(n, 0, slots, arena).Truthy() || Kid(n, 1, slots, arena).Truthy());
    case ExprOp::kNot: return Value::Bool(!Kid(n, 0, slots, arena).Truthy());
    case ExprOp::kCompare:
      return Value::Bool(CompareValues(n.compare, Kid(n, 0, slots, arena), Kid(n, 1, slots, arena)));
    case ExprOp::kCompareConst:
      return Value::Bool(CompareToConstant(n.compare, Kid(n, 0, slots, arena), n.constant));
    case ExprOp::kIn: {
      const Value v = Kid(n, 0, slots, arena);
      return Value::Bool(v.is_present() && sets[n.slot].Contains(v) != n.negated);
    }
    case ExprOp::kAdd:
    case ExprOp::kSub:
    case ExprOp::kMul:
    case ExprOp::kDiv:
    case ExprOp::kMod:
      return Arithmetic(n.op, Kid(n, 0, slots, arena), Kid(n, 1, slots, arena));
    case ExprOp::kNeg: {
      double x;
      if (!Kid(n, 0, slots, arena).AsNumber(&x) || !std::isfinite(x)) return Value::Missing();
      return Value::Number(-x);
    }
    case ExprOp::kCall: {
      Value a[3];
      for (int k = 0; k < n.nargs; ++k) a[k] = Kid(n, k, slots, arena);
      return ApplyExprFunction(n.function, a, n.nargs, n.unit, arena);
    }
    case ExprOp::kCoalesce:
      for (int k = 0; k < n.nargs; ++k) {
        const Value v = EvalAt(args[n.first_arg + k], slots, arena);
        if (v.is_present()) return v;
      }
      return Value::Missing();
  }
  return Value::Missing();
}

}  // namespace fanfold
