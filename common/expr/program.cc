#include "common/expr/program.h"

#include "common/expr/conditional_functions.h"
#include "common/expr/node_ops.h"

namespace fanfold {

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
      return InSetOf(sets[n.slot], n.negated, KidRef(n, 0, slots, arena, &a));
    }
    case ExprOp::kAdd:
    case ExprOp::kSub:
    case ExprOp::kMul:
    case ExprOp::kDiv:
    case ExprOp::kMod:
      return ArithmeticOf(n.op, Kid(n, 0, slots, arena), Kid(n, 1, slots, arena));
    case ExprOp::kNeg: return NegateOf(Kid(n, 0, slots, arena));
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
      Value a;
      return TextEqOf(n, KidRef(n, 0, slots, arena, &a));
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
