// Expr::Program::EvalBatch: the program's nodes as a linear program over a
// batch of records (contract in program.h). Each node's operands are read
// through one (base, stride) pair per kid — a field is rows + slot with the
// row width as stride, a constant has stride 0, an evaluated node its own
// register column — so every op's loop reads its operands without asking
// what they are.
#include <algorithm>
#include <cstddef>
#include <cstdint>
#include <utility>
#include <vector>

#include "common/expr/conditional_functions.h"
#include "common/expr/node_ops.h"
#include "common/expr/program.h"

namespace fanfold {
namespace {

// Where one node's value of record r is: base[r * stride].
struct Column {
  const Value* base = nullptr;
  size_t stride = 0;
  Column() = default;
  Column(const Value* b, size_t s) : base(b), stride(s) {}
  explicit Column(const std::pair<const Value*, size_t>& c) : base(c.first), stride(c.second) {}
  const Value& at(uint32_t r) const { return base[r * stride]; }
};

// A substr start or count (a floored number, +infinity for "to the end")
// as a byte count: SubstrBytes clamps it to [0, size], which for a
// non-negative whole number is min(it, size).
size_t SpanBytes(double d) {
  if (!(d > 0)) return 0;
  if (d >= 9.0e18) return SIZE_MAX;  // infinity too
  return static_cast<size_t>(d);
}

}  // namespace

void Expr::Program::EvalBatch(const Value* rows, size_t width, const uint32_t* sel, size_t n, size_t cap, Value* out,
                              size_t out_stride, BatchScratch* scratch, ScratchArena* arena) const {
  if (n == 0) return;
  const size_t count = nodes.size();
  const size_t root = count - 1;
  std::vector<Value>* regs = &scratch->regs;
  if (regs->size() < count * cap) regs->resize(count * cap);
  if (scratch->columns.size() < count) scratch->columns.resize(count);
  auto* columns = scratch->columns.data();
  // Which nodes every record needs: from the root down, all kids but the
  // operands a short-circuit op may skip (children come before parents).
  std::vector<uint8_t>& batched = scratch->batched;
  batched.assign(count, 0);
  batched[root] = 1;
  for (size_t k = count; k-- > 0;) {
    if (!batched[k]) continue;
    const ExprNode& nd = nodes[k];
    switch (nd.op) {
      case ExprOp::kAnd:
      case ExprOp::kOr: batched[nd.kids[0]] = 1; break;
      case ExprOp::kCoalesce:
      case ExprOp::kBranch: batched[args[nd.first_arg]] = 1; break;
      default:
        for (const int32_t kid : nd.kids)
          if (kid >= 0) batched[kid] = 1;
    }
  }
  // Node q of record r where a short-circuit op needs it: its column when
  // it has one (a field, a constant, a node evaluated for the batch), else
  // evaluated for this record alone.
  auto lazy = [&](int32_t q, uint32_t r) -> Value {
    if (batched[q] || nodes[q].op == ExprOp::kSlot || nodes[q].op == ExprOp::kConst)
      return Column(columns[q]).at(r);
    return EvalAt(q, rows + r * width, arena);
  };
  for (size_t k = 0; k < count; ++k) {
    const ExprNode& nd = nodes[k];
    if (!batched[k] && nd.op != ExprOp::kSlot && nd.op != ExprOp::kConst) continue;
    if (nd.op == ExprOp::kSlot) {
      columns[k] = {rows + nd.slot, width};
      if (k == root)
        for (size_t j = 0; j < n; ++j) out[sel[j] * out_stride] = rows[sel[j] * width + nd.slot];
      continue;
    }
    if (nd.op == ExprOp::kConst) {
      columns[k] = {&nd.constant.value, 0};
      if (k == root)
        for (size_t j = 0; j < n; ++j) out[sel[j] * out_stride] = nd.constant.value;
      continue;
    }
    Value* dst = k == root ? out : regs->data() + k * cap;
    const size_t ds = k == root ? out_stride : 1;
    columns[k] = {dst, ds};
    const Column a = nd.kids[0] >= 0 ? Column(columns[nd.kids[0]]) : Column{};
    const Column b = nd.kids[1] >= 0 ? Column(columns[nd.kids[1]]) : Column{};
    // One loop per op: the switch runs once per node and batch.
#define FF_EACH_RECORD(expr)                  \
  for (size_t j = 0; j < n; ++j) {            \
    const uint32_t r = sel[j];                \
    dst[r * ds] = (expr);                     \
  }                                           \
  break
    switch (nd.op) {
      case ExprOp::kConst:
      case ExprOp::kSlot: break;  // handled above
      case ExprOp::kAnd: FF_EACH_RECORD(Value::Bool(a.at(r).Truthy() && lazy(nd.kids[1], r).Truthy()));
      case ExprOp::kOr: FF_EACH_RECORD(Value::Bool(a.at(r).Truthy() || lazy(nd.kids[1], r).Truthy()));
      case ExprOp::kNot: FF_EACH_RECORD(Value::Bool(!a.at(r).Truthy()));
      case ExprOp::kCompare: FF_EACH_RECORD(Value::Bool(CompareValues(nd.compare, a.at(r), b.at(r))));
      case ExprOp::kCompareConst: FF_EACH_RECORD(Value::Bool(CompareToConstant(nd.compare, a.at(r), nd.constant)));
      case ExprOp::kIn: FF_EACH_RECORD(InSetOf(sets[nd.slot], nd.negated, a.at(r)));
      case ExprOp::kAdd:
      case ExprOp::kSub:
      case ExprOp::kMul:
      case ExprOp::kDiv:
      case ExprOp::kMod: FF_EACH_RECORD(ArithmeticOf(nd.op, a.at(r), b.at(r)));
      case ExprOp::kNeg: FF_EACH_RECORD(NegateOf(a.at(r)));
      case ExprOp::kTextEq: FF_EACH_RECORD(TextEqOf(nd, a.at(r)));
      case ExprOp::kEpoch: FF_EACH_RECORD(EpochOf(a.at(r), nd.function == ExprFunction::kTimeMs));
      case ExprOp::kClockField: FF_EACH_RECORD(ClockFieldOf(nd.function, a.at(r), nd.time));
      case ExprOp::kSubstrFixed: {
        // A string's part with the span as byte counts, clamped as
        // SubstrBytes clamps (integer arithmetic instead of doubles).
        const size_t start = SpanBytes(nd.span[0]), count = SpanBytes(nd.span[1]);
        for (size_t j = 0; j < n; ++j) {
          const uint32_t r = sel[j];
          const Value& v = a.at(r);
          if (v.kind == ValueKind::kString) {
            const size_t size = v.str.size();
            const size_t from = std::min(start, size);
            dst[r * ds] = Value::String(std::string_view(v.str.data() + from, std::min(count, size - from)));
          } else {
            dst[r * ds] = SubstrOfText(v, nd.span[0], nd.span[1], arena);
          }
        }
        break;
      }
      case ExprOp::kCall: {
        const Column c = nd.kids[2] >= 0 ? Column(columns[nd.kids[2]]) : Column{};
        const Column kid[3] = {a, b, c};
        Value args[3];
        for (size_t j = 0; j < n; ++j) {
          const uint32_t r = sel[j];
          for (int q = 0; q < nd.nargs; ++q) args[q] = kid[q].at(r);
          dst[r * ds] = ApplyExprFunction(nd.function, args, nd.nargs, nd.time, arena);
        }
        break;
      }
      case ExprOp::kCoalesce:
        for (size_t j = 0; j < n; ++j) {
          const uint32_t r = sel[j];
          Value v = Value::Missing();
          for (int q = 0; q < nd.nargs; ++q) {
            Value x = q == 0 ? Column(columns[args[nd.first_arg]]).at(r) : lazy(args[nd.first_arg + q], r);
            if (x.is_present()) {
              v = x;
              break;
            }
          }
          dst[r * ds] = v;
        }
        break;
      case ExprOp::kBranch:
        for (size_t j = 0; j < n; ++j) {
          const uint32_t r = sel[j];
          dst[r * ds] = EvalBranch(nd.nargs, [&](int q) { return lazy(args[nd.first_arg + q], r); });
        }
        break;
    }
#undef FF_EACH_RECORD
  }
}

}  // namespace fanfold
