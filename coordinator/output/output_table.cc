#include "coordinator/output/output_table.h"

#include <algorithm>
#include <cmath>
#include <cstdio>

#include "common/base/cell_text.h"
#include "common/partial/group_key.h"
#include "coordinator/output/cell_render.h"

namespace fanfold {
namespace {

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

std::string RenderAligned(const OutputTable& t, const RenderOptions& o) {
  std::vector<std::vector<std::string>> text(t.rows.size());
  std::vector<size_t> width(t.columns.size());
  for (size_t c = 0; c < t.columns.size(); ++c) width[c] = TextWidth(t.columns[c]);
  for (size_t r = 0; r < t.rows.size(); ++r) {
    for (size_t c = 0; c < t.rows[r].size(); ++c) {
      std::string s = TableCellText(t.rows[r][c], o.DigitsFor(c));
      width[c] = std::max(width[c], TextWidth(s));
      text[r].push_back(std::move(s));
    }
  }
  std::string out;
  auto pad = [&](const std::string& s, size_t w, bool right) {
    std::string fill(w - std::min(w, TextWidth(s)), ' ');
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
      pad(text[r][c], width[c], IsNumericCell(t.rows[r][c]));
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
        AppendRowObject(t.columns, row, &out);
        out.push_back('\n');
      }
      return out;
    }
    case OutputFormat::kJson: {
      std::string out = "[";
      for (size_t r = 0; r < t.rows.size(); ++r) {
        out += r ? ",\n " : "\n ";
        AppendRowObject(t.columns, t.rows[r], &out);
      }
      out += t.rows.empty() ? "]\n" : "\n]\n";
      return out;
    }
  }
  return {};
}

}  // namespace fanfold
