#include "coordinator/output/rows_step.h"

#include <string>
#include <utility>

#include "common/base/scratch_arena.h"
#include "common/base/value.h"

namespace fanfold {
namespace {

// A finished cell as an expression reads it. Lists (a top-k result) are
// present but not scalars; an exact integer wider than 64 bits becomes its
// nearest double, as integer arithmetic does past its range.
Value CellValue(const Cell& c) {
  switch (c.kind) {
    case Cell::Kind::kNull: return Value::Null();
    case Cell::Kind::kBool: return Value::Bool(c.boolean);
    case Cell::Kind::kInt: return Value::FromWide(c.integer);
    case Cell::Kind::kFloat: return Value::Number(c.number);
    case Cell::Kind::kString: return Value::String(c.str);
    case Cell::Kind::kList:
    case Cell::Kind::kRecord: return Value::Other();
  }
  return Value::Missing();
}

// The cell of an expression's result; null iff it has no value. Integers stay
// exact, strings are copied out of the arena.
Cell ResultCell(const Value& v) {
  switch (v.kind) {
    case ValueKind::kBool: return Cell::Bool(v.boolean);
    case ValueKind::kNumber: return v.is_integer() ? Cell::Int(v.Wide()) : Cell::Float(v.number);
    case ValueKind::kString: return Cell::String(std::string(v.str));
    default: return Cell::Null();
  }
}

}  // namespace

RowsStep::RowsStep(const RowsPlan& plan) : plan_(plan), slots_(plan.fields.size()) {
  counts_.no_value.assign(plan.add.size(), 0);
}

bool RowsStep::Apply(std::vector<Cell>* row_ptr) {
  std::vector<Cell>& row = *row_ptr;
  ++counts_.rows_in;
  if (plan_.add.empty() && !plan_.keep) return true;
  // Reserved first: the slots view strings inside the row's cells, which
  // must not move while the added cells are appended.
  row.reserve(plan_.merged_columns + plan_.add.size());
  for (size_t c = 0; c < plan_.merged_columns; ++c) slots_[c] = CellValue(row[c]);
  arena_.Reset();
  for (size_t i = 0; i < plan_.add.size(); ++i) {
    const Expr& e = plan_.add[i].expr;
    const int direct = e.DirectSlot();
    // A plain copy of a column keeps it as it is (a list, a wide integer).
    Cell cell = direct >= 0 ? row[direct] : ResultCell(e.Eval(slots_.data(), &arena_));
    if (cell.kind == Cell::Kind::kNull) ++counts_.no_value[i];
    row.push_back(std::move(cell));
    slots_[plan_.merged_columns + i] = CellValue(row.back());
  }
  if (plan_.keep && !plan_.keep->Eval(slots_.data(), &arena_).Truthy()) {
    ++counts_.rows_dropped;
    return false;
  }
  return true;
}

RowsStepCounts ApplyRowsStep(const RowsPlan& plan, OutputTable* table) {
  for (const AddedColumn& a : plan.add) table->columns.push_back(a.name);
  RowsStep step(plan);
  std::vector<std::vector<Cell>> kept;
  kept.reserve(table->rows.size());
  for (std::vector<Cell>& row : table->rows)
    if (step.Apply(&row)) kept.push_back(std::move(row));
  table->rows = std::move(kept);
  return step.counts();
}

}  // namespace fanfold
