#include "coordinator/output/cell_render.h"

#include <cmath>
#include <cstdio>

#include "common/base/cell_text.h"
#include "coordinator/output/output_table.h"

namespace fanfold {

std::string PlainText(const Cell& c, int digits) {
  if (digits <= 0 || c.kind != Cell::Kind::kFloat || !std::isfinite(c.number)) return CellText(c);
  if (c.number == 0) return "0";  // -0 too, as CellText prints it
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.*g", digits, c.number);
  return buf;
}

namespace {

// For people reading a table, a list of {"value", "count"} records (top-k)
// reads better as "a (12), b (7)" than as JSON; other cells as PlainText.
std::string DisplayText(const Cell& c, int digits) {
  if (c.kind == Cell::Kind::kNull) return kTableNull;
  if (c.kind != Cell::Kind::kList) return PlainText(c, digits);
  std::string out;
  for (const Cell& item : c.items) {
    if (item.kind != Cell::Kind::kRecord || item.items.size() != 2) return CellText(c);
    if (!out.empty()) out += ", ";
    const Cell& value = item.items[0];
    out += value.kind == Cell::Kind::kNull ? std::string(kTableNull) : PlainText(value, digits);
    out += " (" + PlainText(item.items[1], digits) + ")";
  }
  return out;
}

}  // namespace

std::string TableCellText(const Cell& c, int digits) {
  std::string s = DisplayText(c, digits);
  for (char& ch : s)
    if (ch == '\n' || ch == '\t' || ch == '\r') ch = ' ';
  return s;
}

size_t TextWidth(const std::string& s) {
  size_t n = 0;
  for (unsigned char c : s) n += (c & 0xC0) != 0x80;
  return n;
}

void AppendRowObject(const std::vector<std::string>& columns, const std::vector<Cell>& row, std::string* out) {
  out->push_back('{');
  for (size_t c = 0; c < row.size(); ++c) {
    if (c) out->push_back(',');
    AppendJsonString(columns[c], out);
    out->push_back(':');
    AppendCellJson(row[c], out);
  }
  out->push_back('}');
}

}  // namespace fanfold
