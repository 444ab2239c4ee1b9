// Text forms of output cells: JSON text, and the plain text used in CSV and
// table cells. Numbers use the shortest round-trip form of
// common/base/number_text.h. Pure; thread-safe.
#pragma once

#include <string>
#include <string_view>

#include "common/base/cell.h"

namespace fanfold {

// Appends s as a JSON string literal (RFC 8259 escaping) to *out.
void AppendJsonString(const std::string& s, std::string* out);

// Appends s as one CSV/TSV field (RFC 4180): as it is, or in double quotes
// with quotes doubled when it holds sep, a quote, CR or LF.
void AppendCsvField(std::string_view s, char sep, std::string* out);

// The cell as JSON text. Non-finite numbers become the JSON strings "inf",
// "-inf" and "nan": the text CSV and the table show for them.
std::string CellJson(const Cell& c);
void AppendCellJson(const Cell& c, std::string* out);

// The cell as plain text for CSV/table: null → "", strings as they are,
// numbers via FormatNumber, lists/records as compact JSON.
std::string CellText(const Cell& c);

}  // namespace fanfold
