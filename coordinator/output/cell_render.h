// Cell rendering shared by the in-memory renderer (output_table.h) and the
// streaming writers (row_writer.h), so both give the same bytes: a cell's
// CSV text (rounded when asked), its text in the aligned table, a row as a
// JSON object, and the display width of a text. Pure functions; thread-safe.
#pragma once

#include <cstddef>
#include <string>
#include <vector>

#include "common/base/cell.h"

namespace fanfold {

// A scalar cell's CSV/table text: a finite float rounded to `digits`
// significant digits when asked (> 0, C's "%.*g"), anything else as CellText.
std::string PlainText(const Cell& c, int digits);

// The cell as the aligned table shows it: null as kTableNull, a list of
// {"value", "count"} records (top-k) as "a (12), b (7)", others as
// PlainText; newlines, tabs and CRs become spaces.
std::string TableCellText(const Cell& c, int digits);

// Display width in terminal columns, counting UTF-8 code points.
size_t TextWidth(const std::string& s);

// True iff the table right-aligns the cell (a number).
inline bool IsNumericCell(const Cell& c) { return c.kind == Cell::Kind::kInt || c.kind == Cell::Kind::kFloat; }

// Appends row as a JSON object {"column": value, ...} (every digit).
// REQUIRES: columns.size() >= row.size().
void AppendRowObject(const std::vector<std::string>& columns, const std::vector<Cell>& row, std::string* out);

}  // namespace fanfold
