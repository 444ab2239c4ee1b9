// OutputTable: the finished result — column names and rows of cells — and
// the three things done to it before it is written: sorting (by the job's
// order, ties broken by the group columns, then by all columns), the row
// limit, and writing as CSV (RFC 4180), JSON (an array of row objects),
// NDJSON (one row object per line) or an aligned text table. Plain data.
#pragma once

#include <algorithm>
#include <cstddef>
#include <string>
#include <vector>

#include "common/base/cell.h"
#include "common/job/job_spec.h"

namespace fanfold {

// How the aligned table shows a null cell (a key missing or null in the
// record, or a measure with no value), so it cannot be taken for an empty
// string, which shows as nothing. CSV has no null: an empty cell there.
inline constexpr const char* kTableNull = "(null)";

struct OutputTable {
  std::vector<std::string> columns;
  size_t key_columns = 0;  // the first key_columns columns are the group key
  std::vector<std::vector<Cell>> rows;
};

// Sorts rows by `order` (column names must exist), then by the key columns
// ascending. Stable and total, so equal inputs give equal outputs.
void SortRows(OutputTable* table, const std::vector<OrderSpec>& order);

// How numbers are shown. digits > 0 rounds every finite float cell of CSV
// and the table to that many significant digits, as C's "%.*g" (and
// Python's format(x, '.Ng')) does: correctly rounded from the double's exact
// binary value, a tie going to the even digit. Integers, JSON and NDJSON
// keep every digit. 0 = shortest round-trip text (no rounding).
// column_digits[c] > 0 overrides digits for column c (a measure's
// "shown_digits"); columns past its end, or with 0, take digits.
struct RenderOptions {
  int digits = 0;
  std::vector<int> column_digits = {};

  int DigitsFor(size_t column) const {
    return column < column_digits.size() && column_digits[column] > 0 ? column_digits[column] : digits;
  }
  bool rounds() const {
    return digits > 0 || std::any_of(column_digits.begin(), column_digits.end(), [](int d) { return d > 0; });
  }
};

// Renders the table in `format` (always ends with a newline unless empty).
std::string RenderTable(const OutputTable& table, OutputFormat format, const RenderOptions& options = {});

}  // namespace fanfold
