// Expr: a compiled expression of fanfold's expression language (see
// docs/expressions.md). Compiled once per plan from text; evaluated per
// record against the slots of a FieldTable without heap allocation (strings
// made by functions go to the caller's ScratchArena). An Expr is immutable
// after Compile and may be evaluated from several threads with separate
// arenas.
#pragma once

#include <memory>
#include <string>
#include <cstdint>
#include <string_view>
#include <utility>
#include <vector>

#include "common/expr/ast.h"
#include "common/input/field_table.h"
#include "common/base/scratch_arena.h"
#include "common/base/status.h"
#include "common/base/value.h"

namespace fanfold {

class Expr {
 public:
  // Compiles `text`. `{...}` references are interned in *fields as raw
  // fields; bare identifiers must name derived fields already in *fields.
  // On error returns InvalidArgument whose message starts with
  // "column N: " (1-based, counting bytes of `text`) and says what was
  // found and what was expected.
  static Result<Expr> Compile(std::string_view text, FieldTable* fields);

  // As Compile, from a tree ParseExpr made of `text` (callers that check or
  // rewrite names first, such as the result-row step of common/job).
  static Result<Expr> CompileTree(const AstNode& root, std::string_view text, FieldTable* fields);

  // REQUIRES: slots has one Value per slot of the FieldTable used to compile.
  // The result may point into slots' strings or into *arena.
  Value Eval(const Value* slots, ScratchArena* arena) const;

  // Room EvalBatch reuses between calls: one per evaluating thread.
  struct BatchScratch {
    std::vector<Value> regs;                               // per node and record
    std::vector<std::pair<const Value*, size_t>> columns;  // per node: base, stride
    std::vector<uint8_t> batched;                          // per node: evaluated for the whole batch
  };

  // Evaluates a batch of records at once: for each r in sel[0, n), the
  // record whose slots are rows + r * width, its result written to
  // out[r * out_stride]. The same values as Eval per record (a differential
  // test compares them), with the evaluator's dispatch paid per batch, not
  // per record. Operands that and, or, coalesce and branch may skip are
  // evaluated per record, only where needed, as Eval does. Strings go to
  // *arena as with Eval. out may be a slot of rows the expression does not
  // read. REQUIRES: every sel[j] < cap; rows has cap records of width slots.
  void EvalBatch(const Value* rows, size_t width, const uint32_t* sel, size_t n, size_t cap, Value* out,
                 size_t out_stride, BatchScratch* scratch, ScratchArena* arena) const;

  const std::string& text() const;

  // The FieldTable slots this expression reads (each once, ascending).
  std::vector<int> SlotsRead() const;

  // The slot, iff the whole expression is a plain field or derived-field
  // reference (then Eval(slots) == slots[slot]); -1 otherwise. Lets hot
  // loops skip the evaluator for the commonest expression.
  int DirectSlot() const;
  // True iff some time function of the expression names a zone other than
  // UTC, so its results depend on the tz database's rules.
  bool ReadsZoneRules() const;

  Expr(Expr&&) noexcept;
  Expr& operator=(Expr&&) noexcept;
  ~Expr();

  struct Program;  // the compiled form; defined in the implementation

 private:
  explicit Expr(std::unique_ptr<Program> p);
  std::unique_ptr<Program> program_;
};

}  // namespace fanfold
