#include "coordinator/output/row_writer.h"

#include <algorithm>
#include <cmath>

#include "common/base/cell_text.h"
#include "common/base/number_text.h"
#include "coordinator/output/cell_render.h"

namespace fanfold {
namespace {

// Appends one CSV field: AppendCsvField(PlainText(c, digits)) without the
// text copy, and without the quoting scan for cells whose text never needs
// quotes (numbers, booleans, null: digits, signs, '.', 'e', "inf", "nan").
void AppendCsvCell(const Cell& c, int digits, std::string* out) {
  switch (c.kind) {
    case Cell::Kind::kNull: return;
    case Cell::Kind::kBool: *out += c.boolean ? "true" : "false"; return;
    case Cell::Kind::kInt: AppendWideInt(c.integer, out); return;
    case Cell::Kind::kFloat:
      if (digits <= 0 || !std::isfinite(c.number)) {
        char buf[kNumberTextMax];
        out->append(FormatNumber(c.number, buf));
        return;
      }
      break;
    case Cell::Kind::kString: AppendCsvField(c.str, ',', out); return;
    default: break;
  }
  AppendCsvField(PlainText(c, digits), ',', out);
}

}  // namespace

TableWidths::TableWidths(const std::vector<std::string>& columns, RenderOptions options)
    : options_(std::move(options)), width_(columns.size()) {
  for (size_t c = 0; c < columns.size(); ++c) width_[c] = TextWidth(columns[c]);
}

void TableWidths::Add(const std::vector<Cell>& row) {
  for (size_t c = 0; c < row.size() && c < width_.size(); ++c)
    width_[c] = std::max(width_[c], TextWidth(TableCellText(row[c], options_.DigitsFor(c))));
}

RowWriter::RowWriter(OutputFormat format, const std::vector<std::string>& columns, RenderOptions options,
                     std::vector<size_t> widths, Sink sink)
    : format_(format),
      columns_(columns),
      options_(std::move(options)),
      width_(std::move(widths)),
      sink_(std::move(sink)) {
  if (width_.size() < columns_.size()) width_.resize(columns_.size(), 0);
}

void RowWriter::Pad(const std::string& s, size_t w, bool right) {
  const size_t fill = w - std::min(w, TextWidth(s));
  if (right) buf_.append(fill, ' ');
  buf_ += s;
  if (!right) buf_.append(fill, ' ');
}

// Trailing spaces help no one (RenderTable strips them too).
static void EndTableLine(std::string* buf) {
  while (!buf->empty() && buf->back() == ' ') buf->pop_back();
  buf->push_back('\n');
}

Status RowWriter::Begin() {
  switch (format_) {
    case OutputFormat::kCsv:
      for (size_t c = 0; c < columns_.size(); ++c) {
        if (c) buf_.push_back(',');
        AppendCsvField(columns_[c], ',', &buf_);
      }
      buf_.push_back('\n');
      break;
    case OutputFormat::kTable:
      for (size_t c = 0; c < columns_.size(); ++c) {
        if (c) buf_ += "  ";
        Pad(columns_[c], width_[c], false);
      }
      EndTableLine(&buf_);
      for (size_t c = 0; c < columns_.size(); ++c) {
        if (c) buf_ += "  ";
        buf_.append(width_[c], '-');
      }
      buf_.push_back('\n');
      break;
    case OutputFormat::kJson: buf_.push_back('['); break;
    case OutputFormat::kNdjson: break;
  }
  return MaybeFlush();
}

Status RowWriter::Row(const std::vector<Cell>& row) {
  switch (format_) {
    case OutputFormat::kCsv:
      for (size_t c = 0; c < row.size(); ++c) {
        if (c) buf_.push_back(',');
        AppendCsvCell(row[c], options_.DigitsFor(c), &buf_);
      }
      buf_.push_back('\n');
      break;
    case OutputFormat::kTable:
      for (size_t c = 0; c < row.size(); ++c) {
        if (c) buf_ += "  ";
        Pad(TableCellText(row[c], options_.DigitsFor(c)), c < width_.size() ? width_[c] : 0, IsNumericCell(row[c]));
      }
      EndTableLine(&buf_);
      break;
    case OutputFormat::kNdjson:
      AppendRowObject(columns_, row, &buf_);
      buf_.push_back('\n');
      break;
    case OutputFormat::kJson:
      buf_ += rows_ ? ",\n " : "\n ";
      AppendRowObject(columns_, row, &buf_);
      break;
  }
  ++rows_;
  return MaybeFlush();
}

Status RowWriter::End() {
  if (format_ == OutputFormat::kJson) buf_ += rows_ == 0 ? "]\n" : "\n]\n";
  Status s = buf_.empty() ? Status::Ok() : sink_(buf_);
  buf_.clear();
  return s;
}

Status RowWriter::MaybeFlush() {
  if (buf_.size() < flush_bytes_) return Status::Ok();
  return Flush();
}

Status RowWriter::Flush() {
  if (buf_.empty()) return Status::Ok();
  Status s = sink_(buf_);
  buf_.clear();
  return s;
}

}  // namespace fanfold
