// RowsPlan: the job's "rows" step compiled — columns computed from each
// finished result row, and the filter on result rows — over a FieldTable whose
// slots are the result's columns by name. Built once by CompilePlan, then
// read-only; the coordinator applies it after the merge (coordinator/output).
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "common/base/status.h"
#include "common/expr/expr.h"
#include "common/input/field_table.h"
#include "common/job/job_spec.h"

namespace fanfold {

struct AddedColumn {
  std::string name;
  Expr expr;              // reads slots of RowsPlan::fields
  int shown_digits = 0;   // display only, as a measure's
};

struct RowsPlan {
  // Slot i is column i of the merged result for i < merged_columns, then the
  // added columns in order (each derived slot named after its column).
  FieldTable fields;
  size_t merged_columns = 0;
  std::vector<AddedColumn> add;
  std::optional<Expr> keep;  // rows for which it is not true are dropped

  // The added columns' names, in order.
  std::vector<std::string> AddedNames() const;
};

// Compiles spec.rows (of a reduction of the job file at job_path) over the
// merged result's `columns`. In its expressions a
// bare name, or column('any name'), is a column of the row; a field reference
// {...} is an error (there are no records after the merge). Errors name the
// job file, the JSON Pointer and the column inside the expression, and offer
// the nearest column names.
Result<RowsPlan> CompileRowsPlan(const std::string& job_path, const ReductionSpec& spec,
                                 const std::vector<std::string>& columns);

}  // namespace fanfold
