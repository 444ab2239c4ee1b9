#include "common/expr/program.h"

#include "common/expr/conditional_functions.h"
#include "common/expr/number_arithmetic.h"

namespace fanfold {
namespace {

Value Arithmetic(ExprOp op, const Value& l, const Value& r) {
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
  // Overflow to infinity (or NaN) has no place in a group key or a sum:
  // ApplyNumberOp gives Missing, like any other unusable number.
  return ApplyNumberOp(nop, x, y);
}

}  // namespace

Value Expr::Program::EvalCall(const ExprNode& n, const Value* slots, ScratchArena* arena) const {
  Value a[3];
  for (int k = 0; k < n.nargs; ++k) a[k] = Kid(n, k, slots, arena);
  return ApplyExprFunction(n.function, a, n.nargs, n.time, arena);
}

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
    case ExprOp::kCompare: {
      Value a, b;
      return Value::Bool(
          CompareValues(n.compare, KidRef(n, 0, slots, arena, &a), KidRef(n, 1, slots, arena, &b)));
    }
    case ExprOp::kCompareConst: {
      Value a;
      return Value::Bool(CompareToConstant(n.compare, KidRef(n, 0, slots, arena, &a), n.constant));
    }
    case ExprOp::kIn: {
      Value a;
      const Value& v = KidRef(n, 0, slots, arena, &a);
      return Value::Bool(v.is_present() && sets[n.slot].Contains(v) != n.negated);
    }
    case ExprOp::kAdd:
    case ExprOp::kSub:
    case ExprOp::kMul:
    case ExprOp::kDiv:
    case ExprOp::kMod:
      return Arithmetic(n.op, Kid(n, 0, slots, arena), Kid(n, 1, slots, arena));
    case ExprOp::kNeg: {
      Value x;
      if (!Kid(n, 0, slots, arena).AsNumeric(&x)) return Value::Missing();
      return NegateNumber(x);
    }
    case ExprOp::kCall: return EvalCall(n, slots, arena);
    case ExprOp::kCoalesce:
      for (int k = 0; k < n.nargs; ++k) {
        const Value v = EvalAt(args[n.first_arg + k], slots, arena);
        if (v.is_present()) return v;
      }
      return Value::Missing();
    case ExprOp::kBranch:
      return EvalBranch(n.nargs, [&](int k) { return EvalAt(args[n.first_arg + k], slots, arena); });
    case ExprOp::kTextEq: {
      // CompareToConstant for a string constant that is not numeric text:
      // missing and null compare false; a string by its bytes; any other
      // value is unequal.
      Value a;
      const Value& v = KidRef(n, 0, slots, arena, &a);
      if (!v.is_present()) return Value::Bool(false);
      if (v.kind != ValueKind::kString) return Value::Bool(n.negated);
      return Value::Bool((v.str == n.constant.value.str) != n.negated);
    }
    case ExprOp::kEpoch: {
      Value a;
      return EpochOf(KidRef(n, 0, slots, arena, &a), n.function == ExprFunction::kTimeMs);
    }
    case ExprOp::kClockField: {
      Value a;
      return ClockFieldOf(n.function, KidRef(n, 0, slots, arena, &a), n.time);
    }
    case ExprOp::kSubstrFixed: {
      Value a;
      return SubstrOf(KidRef(n, 0, slots, arena, &a), n.span[0], n.span[1], arena);
    }
  }
  return Value::Missing();
}

}  // namespace fanfold
