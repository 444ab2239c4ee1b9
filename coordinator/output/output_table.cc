#include "coordinator/output/output_table.h"

#include <algorithm>
#include <cmath>
#include <cstdio>

#include "common/base/cell_text.h"
#include "common/partial/group_key.h"

namespace fanfold {
namespace {

// A scalar cell's CSV/table text: a finite float rounded to `digits`
// significant digits when asked (> 0), anything else as CellText.
std::string PlainText(const Cell& c, int digits) {
  if (digits <= 0 || c.kind != Cell::Kind::kFloat || !std::isfinite(c.number)) return CellText(c);
  if (c.number == 0) return "0";  // -0 too, as CellText prints it
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.*g", digits, c.number);
  return buf;
}

std::string RenderCsv(const OutputTable& t, const RenderOptions& o) {
  std::string out;
  for (size_t c = 0; c < t.columns.size(); ++c) {
    if (c) out.push_back(',');
    AppendCsvField(t.columns[c], ',', &out);
  }
  out.push_back('\n');
  for (const auto& row : t.rows) {
    for (size_t c = 0; c < row.size(); ++c) {
      if (c) out.push_back(',');
      AppendCsvField(PlainText(row[c], o.DigitsFor(c)), ',', &out);
    }
    out.push_back('\n');
  }
  return out;
}

void AppendRowObject(const OutputTable& t, const std::vector<Cell>& row, std::string* out) {
  out->push_back('{');
  for (size_t c = 0; c < row.size(); ++c) {
    if (c) out->push_back(',');
    AppendJsonString(t.columns[c], out);
    out->push_back(':');
    AppendCellJson(row[c], out);
  }
  out->push_back('}');
}

// Display width in terminal columns, counting UTF-8 code points.
size_t Width(const std::string& s) {
  size_t n = 0;
  for (unsigned char c : s) n += (c & 0xC0) != 0x80;
  return n;
}

bool IsNumeric(const Cell& c) { return c.kind == Cell::Kind::kInt || c.kind == Cell::Kind::kFloat; }

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

std::string RenderAligned(const OutputTable& t, const RenderOptions& o) {
  std::vector<std::vector<std::string>> text(t.rows.size());
  std::vector<size_t> width(t.columns.size());
  for (size_t c = 0; c < t.columns.size(); ++c) width[c] = Width(t.columns[c]);
  for (size_t r = 0; r < t.rows.size(); ++r) {
    for (size_t c = 0; c < t.rows[r].size(); ++c) {
      std::string s = DisplayText(t.rows[r][c], o.DigitsFor(c));
      for (char& ch : s)
        if (ch == '\n' || ch == '\t' || ch == '\r') ch = ' ';
      width[c] = std::max(width[c], Width(s));
      text[r].push_back(std::move(s));
    }
  }
  std::string out;
  auto pad = [&](const std::string& s, size_t w, bool right) {
    std::string fill(w - std::min(w, Width(s)), ' ');
    out += right ? fill + s : s + fill;
  };
  for (size_t c = 0; c < t.columns.size(); ++c) {
    if (c) out += "  ";
    pad(t.columns[c], width[c], false);
  }
  while (!out.empty() && out.back() == ' ') out.pop_back();
  out.push_back('\n');
  for (size_t c = 0; c < t.columns.size(); ++c) {
    if (c) out += "  ";
    out += std::string(width[c], '-');
  }
  out.push_back('\n');
  for (size_t r = 0; r < t.rows.size(); ++r) {
    for (size_t c = 0; c < text[r].size(); ++c) {
      if (c) out += "  ";
      pad(text[r][c], width[c], IsNumeric(t.rows[r][c]));
    }
    // Trailing spaces help no one.
    while (!out.empty() && out.back() == ' ') out.pop_back();
    out.push_back('\n');
  }
  return out;
}

}  // namespace

void SortRows(OutputTable* t, const std::vector<OrderSpec>& order) {
  struct Key {
    size_t column;
    bool desc;
  };
  std::vector<Key> keys;
  for (const auto& o : order) {
    auto it = std::find(t->columns.begin(), t->columns.end(), o.by);
    if (it != t->columns.end()) keys.push_back({static_cast<size_t>(it - t->columns.begin()), o.descending});
  }
  for (size_t c = 0; c < t->key_columns; ++c) keys.push_back({c, false});
  std::stable_sort(t->rows.begin(), t->rows.end(), [&](const auto& a, const auto& b) {
    for (const Key& k : keys) {
      int c = CompareCells(a[k.column], b[k.column]);
      if (c != 0) return k.desc ? c > 0 : c < 0;
    }
    return false;
  });
}

std::string RenderTable(const OutputTable& t, OutputFormat format, const RenderOptions& o) {
  switch (format) {
    case OutputFormat::kCsv: return RenderCsv(t, o);
    case OutputFormat::kTable: return RenderAligned(t, o);
    case OutputFormat::kNdjson: {
      std::string out;
      for (const auto& row : t.rows) {
        AppendRowObject(t, row, &out);
        out.push_back('\n');
      }
      return out;
    }
    case OutputFormat::kJson: {
      std::string out = "[";
      for (size_t r = 0; r < t.rows.size(); ++r) {
        out += r ? ",\n " : "\n ";
        AppendRowObject(t, t.rows[r], &out);
      }
      out += t.rows.empty() ? "]\n" : "\n]\n";
      return out;
    }
  }
  return {};
}

}  // namespace fanfold
