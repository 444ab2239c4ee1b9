// OutputTable: the finished result — column names and rows of cells — and
// the three things done to it before it is written: sorting (by the job's
// order, ties broken by the group columns, then by all columns), the row
// limit, and writing as CSV (RFC 4180), JSON (an array of row objects),
// NDJSON (one row object per line) or an aligned text table. Plain data.
#pragma once

#include <cstddef>
#include <string>
#include <vector>

#include "common/base/cell.h"
#include "common/job/job_spec.h"

namespace fanfold {

struct OutputTable {
  std::vector<std::string> columns;
  size_t key_columns = 0;  // the first key_columns columns are the group key
  std::vector<std::vector<Cell>> rows;
};

// Sorts rows by `order` (column names must exist), then by the key columns
// ascending. Stable and total, so equal inputs give equal outputs.
void SortRows(OutputTable* table, const std::vector<OrderSpec>& order);

// Renders the table in `format` (always ends with a newline unless empty).
std::string RenderTable(const OutputTable& table, OutputFormat format);

}  // namespace fanfold
