// Row sort keys: byte strings whose unsigned byte order (memcmp, and
// std::string's compare) is the order SortRows gives the result rows — the
// emit.order columns (descending ones reversed), then the key columns
// ascending, ties in the order the rows arrived — so rows can be sorted,
// kept in a bounded heap or merged from spilled files by comparing bytes,
// without their cells. Pure functions; thread-safe.
//
// Each sort column's cell is encoded prefix-free (no encoding is a proper
// prefix of another), so concatenating them keeps the order; a descending
// column's bytes are inverted (x -> 0xFF - x), which reverses its order. The
// layout, per cell (CompareCells' order: null < bools < numbers < strings <
// lists/records; numbers exactly, integers against floats too, NaN last):
//   null    0x00
//   bool    0x01, then 0x00 (false) or 0x01 (true)
//   number  0x02, then 0x02 for NaN, else 0x01, then F = the largest double
//           <= the value (-0 as +0) as 8 order-preserving bytes (sign bit
//           flipped for positives, all bits for negatives; big-endian), then
//           the value minus F (an integer in [0, 2^75): 0 for floats) as 16
//           bytes big-endian
//   string  0x03, then the bytes with 0x00 written as 0x00 0xFF, then 0x00 0x00
//   other   0x04, then the cell's JSON text (CellJson) as a string is written
// After the columns: the row's arrival number as 8 bytes big-endian, so keys
// are distinct and equal cells keep the arrival order (SortRows is stable).
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>
#include <vector>

#include "common/base/cell.h"
#include "common/job/job_spec.h"

namespace fanfold {

struct SortColumn {
  size_t column = 0;
  bool descending = false;
};

// The columns rows are ordered by: each of `order` that names one of
// `columns` (others are skipped, as SortRows skips them), then the first
// key_columns columns ascending.
std::vector<SortColumn> SortColumnsFor(const std::vector<std::string>& columns, size_t key_columns,
                                       const std::vector<OrderSpec>& order);

// Appends one cell's encoding (above) to *out.
void AppendCellSortKey(const Cell& cell, bool descending, std::string* out);

// Appends row's sort key: its sort columns' cells, then `arrival`.
// REQUIRES: every SortColumn::column < row.size().
void AppendSortKey(const std::vector<Cell>& row, const std::vector<SortColumn>& columns, uint64_t arrival,
                   std::string* out);

}  // namespace fanfold
