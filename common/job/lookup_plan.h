// CompiledLookup: one lookup table of a plan — the loaded table, the match
// expression over the records, and the FieldTable slots its fields fill.
// Every well-formed record is looked up once per table, in job-file order and
// before "keep" and the derived fields, so a table's fields read like derived
// fields everywhere; a record whose match value finds no row (missing, null,
// or a key the table lacks) sees them missing (left-join semantics) and counts
// as unmatched. Built while the plan compiles; read-only after, thread-safe.
#pragma once

#include <cstdint>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include "common/base/scratch_arena.h"
#include "common/base/status.h"
#include "common/expr/expr.h"
#include "common/input/field_table.h"
#include "common/job/job_spec.h"
#include "common/lookup/lookup_table.h"
#include "common/lookup/table_loader.h"

namespace fanfold {

struct CompiledLookup {
  std::string name;
  std::shared_ptr<const LookupTable> table;
  Expr match;
  std::vector<int> slots;  // per table field: the slot it fills

  // Looks the record in `slots` up and fills the table's fields (missing
  // when no row matches). Returns true iff a row matched. *key is the
  // caller's reusable key buffer.
  bool Fill(Value* slots, ScratchArena* arena, std::string* key) const {
    const Value* row = table->Find(match.Eval(slots, arena), key);
    for (size_t f = 0; f < this->slots.size(); ++f) slots[this->slots[f]] = row != nullptr ? row[f] : Value::Missing();
    return row != nullptr;
  }
};

// Loads table `index` of spec (its path relative to spec.base_dir) and adds
// its fields to *fields as named values. `match` is its compiled match
// expression. Errors name the job file and pointer, or the table's file and
// line; a field name already taken by an earlier table is refused.
Result<CompiledLookup> CompileLookup(const JobSpec& spec, size_t index, Expr match, FieldTable* fields,
                                     const TableLimits& limits = {});

// The line of the plan's canonical text for lookup `l` (spec: its TableSpec):
// name, absolute path, format, size, mtime, content hash, key, match, fields.
std::string LookupCanonicalLine(const CompiledLookup& l, const TableSpec& spec);

// The tables whose canonical line differs between two plan texts, as
// "lookup table \"lamps\" ('/abs/lamps.csv')" joined by ", "; "" iff none.
std::string ChangedLookupTables(std::string_view old_plan_text, std::string_view new_plan_text);

}  // namespace fanfold
