// RowWriter: writes a result row by row in one output format — CSV (RFC
// 4180), JSON (an array of row objects), NDJSON (one object per line) or the
// aligned text table — giving exactly the bytes RenderTable gives for the
// same rows, without holding them: the text goes to a sink in pieces of
// about kFlushBytes, each ending at a line end. The aligned table needs its
// column widths before the first row: a TableWidths pass over the same rows
// (with the same RenderOptions) gives them. Owned by one thread.
#pragma once

#include <cstdint>
#include <functional>
#include <string>
#include <string_view>
#include <vector>

#include "common/base/cell.h"
#include "common/base/status.h"
#include "common/job/job_spec.h"
#include "coordinator/output/output_table.h"

namespace fanfold {

// The widths of the aligned table's columns: each column's name and every
// row's cell text (as rendered with the options), the widest.
class TableWidths {
 public:
  TableWidths(const std::vector<std::string>& columns, RenderOptions options);
  void Add(const std::vector<Cell>& row);
  const std::vector<size_t>& widths() const { return width_; }

 private:
  RenderOptions options_;
  std::vector<size_t> width_;
};

class RowWriter {
 public:
  using Sink = std::function<Status(std::string_view)>;
  static constexpr size_t kFlushBytes = size_t{1} << 20;

  // REQUIRES: columns (and the sink's targets) outlive the writer; for
  // kTable, widths from a TableWidths over every row to come, with these
  // options (else it may be empty).
  RowWriter(OutputFormat format, const std::vector<std::string>& columns, RenderOptions options,
            std::vector<size_t> widths, Sink sink);

  // The text before the first row (CSV's header, the table's two header
  // lines, JSON's "["). Call once, first.
  Status Begin();
  // One row. REQUIRES: row.size() == columns.size(); Begin() called.
  Status Row(const std::vector<Cell>& row);
  // The text after the last row; hands everything left to the sink.
  Status End();
  // Hands the text held so far to the sink (a piece ending at a line end).
  Status Flush();
  // Text held, not yet handed to the sink.
  size_t held() const { return buf_.size(); }
  // The sink gets the text once this much is held (default kFlushBytes).
  void set_flush_bytes(size_t n) { flush_bytes_ = n; }
  uint64_t rows() const { return rows_; }

 private:
  Status MaybeFlush();
  void Pad(const std::string& s, size_t width, bool right);

  OutputFormat format_;
  const std::vector<std::string>& columns_;
  RenderOptions options_;
  std::vector<size_t> width_;
  Sink sink_;
  std::string buf_;
  size_t flush_bytes_ = kFlushBytes;
  uint64_t rows_ = 0;
};

}  // namespace fanfold
