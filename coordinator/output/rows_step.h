// ApplyRowsStep: runs a plan's "rows" step on the merged result — appends
// the added columns to every row (each computed from the finished columns of
// that row), then drops the rows its filter does not keep — and counts what
// it did for the run summary. Runs before ordering and limit. Coordinator
// main thread; owns nothing beyond the counts it returns.
#pragma once

#include <cstdint>
#include <vector>

#include "common/job/rows_plan.h"
#include "coordinator/output/output_table.h"

namespace fanfold {

struct RowsStepCounts {
  std::vector<uint64_t> no_value;  // per added column: rows where it came out null or missing
  uint64_t rows_in = 0;            // rows the merge gave
  uint64_t rows_dropped = 0;       // rows the filter did not keep
};

// REQUIRES: table's rows hold plan.merged_columns cells each (the merge's).
// Afterwards they hold the added columns too, and table->columns names them.
RowsStepCounts ApplyRowsStep(const RowsPlan& plan, OutputTable* table);

}  // namespace fanfold
