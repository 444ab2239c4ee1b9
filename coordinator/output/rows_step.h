// RowsStep: runs a plan's "rows" step on the merged result, one row at a
// time as the merge finishes them — appends the added columns to the row
// (each computed from the finished columns of that row), then says whether
// its filter keeps the row — and counts what it did for the run summary.
// Runs before ordering and limit. ApplyRowsStep does it to a whole table.
// Coordinator main thread; owns nothing beyond its scratch and counts.
#pragma once

#include <cstddef>
#include <cstdint>
#include <vector>

#include "common/base/scratch_arena.h"
#include "common/base/value.h"
#include "common/job/rows_plan.h"
#include "coordinator/output/output_table.h"

namespace fanfold {

struct RowsStepCounts {
  std::vector<uint64_t> no_value;  // per added column: rows where it came out null or missing
  uint64_t rows_in = 0;            // rows the merge gave
  uint64_t rows_dropped = 0;       // rows the filter did not keep
  // Adds another step's counts over the same plan (the rows step of
  // another key range of one result).
  void Add(const RowsStepCounts& o) {
    rows_in += o.rows_in;
    rows_dropped += o.rows_dropped;
    for (size_t i = 0; i < o.no_value.size() && i < no_value.size(); ++i) no_value[i] += o.no_value[i];
  }
};

class RowsStep {
 public:
  // REQUIRES: plan outlives the step.
  explicit RowsStep(const RowsPlan& plan);
  // Appends the added columns to *row and returns true iff the filter keeps
  // it. REQUIRES: row holds plan.merged_columns cells (the merge's).
  bool Apply(std::vector<Cell>* row);
  const RowsStepCounts& counts() const { return counts_; }

 private:
  const RowsPlan& plan_;
  RowsStepCounts counts_;
  std::vector<Value> slots_;
  ScratchArena arena_;
};

// REQUIRES: table's rows hold plan.merged_columns cells each (the merge's).
// Afterwards they hold the added columns too, and table->columns names them.
RowsStepCounts ApplyRowsStep(const RowsPlan& plan, OutputTable* table);

}  // namespace fanfold
