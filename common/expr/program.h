// Expr::Program: the compiled form of an expression — a flat array of nodes,
// children before parents, evaluated by a small recursive walk that never
// allocates (strings made by functions go to the caller's ScratchArena), or
// for a batch of records at once by EvalBatch (program_batch.cc): the same
// nodes as a linear program, one pass over the batch per node.
// Filled once by CompileExprAst, then immutable: Eval may run on several
// threads at once, each with its own arena.
#pragma once

#include <cstdint>
#include <deque>
#include <string>
#include <vector>

#include "common/expr/expr.h"
#include "common/expr/functions.h"
#include "common/expr/literal_set.h"
#include "common/base/value_compare.h"

namespace fanfold {

enum class ExprOp : uint8_t {
  kConst,         // constant
  kSlot,          // slots[slot]
  kAnd, kOr,      // kids 0, 1; short-circuit; bool
  kNot,           // kid 0; bool
  kCompare,       // kid 0 `compare` kid 1
  kCompareConst,  // kid 0 `compare` constant (a constant left side is mirrored)
  kIn,            // kid 0 in sets[slot] (negated: not in)
  kAdd, kSub, kMul, kDiv, kMod,  // kids 0, 1
  kNeg,           // kid 0
  kCall,          // function on kids 0..nargs
  kCoalesce,      // first present of Program::args[first_arg .. first_arg + nargs)
  kBranch,        // branch() over the same args: tests and values, then otherwise
  // Fast paths the compiler picks for common calls and comparisons (the
  // same results as the general ops they replace, without an argument
  // array or the function switch):
  kTextEq,        // kid 0 == constant.value, a non-numeric string (negated: !=)
  kEpoch,         // time(kid 0), or time_ms(kid 0) when function is kTimeMs
  kClockField,    // clock_hour or weekday (function) of kid 0, on time.zone
  kSubstrFixed,   // substr(kid 0, span[0], span[1]): constant start and count, floored
};

struct ExprNode {
  ExprOp op = ExprOp::kConst;
  CompareOp compare = CompareOp::kEq;
  ExprFunction function = ExprFunction::kHas;
  TimeBucket time;                 // kCall of a time function: unit, count, zone
  bool negated = false;            // kIn
  uint8_t nargs = 0;
  int32_t kids[3] = {-1, -1, -1};  // node indices, all smaller than this node's
  int32_t first_arg = 0;           // kCoalesce, kBranch
  int32_t slot = -1;               // kSlot: the FieldTable slot; kIn: index into sets
  CompareConstant constant;        // kConst: constant.value; kCompareConst, kTextEq: the right side
  double span[2] = {0, 0};         // kSubstrFixed: start and count (+infinity: to the end)
};

struct Expr::Program {
  std::string text;
  std::vector<ExprNode> nodes;  // the root is the last node
  std::vector<int32_t> args;    // node indices of kCoalesce and kBranch arguments
  std::vector<LiteralSet> sets;
  std::deque<std::string> strings;  // texts that constants point to; never moves them

  // REQUIRES: nodes is not empty; slots as for Expr::Eval.
  Value Eval(const Value* slots, ScratchArena* arena) const {
    return EvalAt(static_cast<int32_t>(nodes.size() - 1), slots, arena);
  }
  Value EvalAt(int32_t index, const Value* slots, ScratchArena* arena) const;

  // Evaluates the expression on the records rows + r * width for each r in
  // sel[0, n), writing record r's result to out[r * out_stride]. Gives what
  // Eval gives on each record (tests/expr/batch_eval_test.cc compares them
  // on generated expressions): each node that every record needs is
  // evaluated once per record, in node order, into registers (node k of
  // record r at regs[k * cap + r]), so the op is chosen once per node and
  // batch, not once per node and record. The operands that and, or,
  // coalesce and branch may skip (the right side, the arguments after the
  // first) are evaluated per record by EvalAt, only where needed.
  // REQUIRES: as Expr::EvalBatch; *scratch is the caller's (reused, so
  // that only its first batches allocate). out may be a slot of rows (a
  // derived field): record r's result is written after its operands are read.
  void EvalBatch(const Value* rows, size_t width, const uint32_t* sel, size_t n, size_t cap, Value* out,
                 size_t out_stride, BatchScratch* scratch, ScratchArena* arena) const;

 private:
  // Reads fields and constants inline: most operands are one or the other.
  Value Kid(const ExprNode& n, int k, const Value* slots, ScratchArena* arena) const {
    const ExprNode& c = nodes[n.kids[k]];
    if (c.op == ExprOp::kSlot) return slots[c.slot];
    if (c.op == ExprOp::kConst) return c.constant.value;
    return EvalAt(n.kids[k], slots, arena);
  }
  // As Kid, without copying a field or constant: a reference to it, or to
  // *scratch holding the evaluated kid.
  const Value& KidRef(const ExprNode& n, int k, const Value* slots, ScratchArena* arena, Value* scratch) const {
    const ExprNode& c = nodes[n.kids[k]];
    if (c.op == ExprOp::kSlot) return slots[c.slot];
    if (c.op == ExprOp::kConst) return c.constant.value;
    *scratch = EvalAt(n.kids[k], slots, arena);
    return *scratch;
  }
  // kCall: the general function call (its argument array kept out of
  // EvalAt's frame).
  Value EvalCall(const ExprNode& n, const Value* slots, ScratchArena* arena) const;
};

}  // namespace fanfold
