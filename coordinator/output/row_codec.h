// Row codec: a result row (its cells) as bytes and back, losslessly — what
// the output stage keeps of a row while it orders rows in memory or in its
// sort files (coordinator/output/row_sorter.h). Written and read by the same
// coordinator process only, never kept past it, so it has no version.
// Layout (common/base/byte_io.h primitives): varint cell count, then per
// cell a kind byte (Cell::Kind's value) and
//   null: nothing   bool: u8   int: 16 bytes, two's complement little-endian
//   float: f64 bits   string: varint length + bytes
//   list: varint count + cells   record: varint count + (string name, cell)
// Pure functions; thread-safe.
#pragma once

#include <string>
#include <string_view>
#include <vector>

#include "common/base/cell.h"
#include "common/base/status.h"

namespace fanfold {

// Appends row's encoding to *out.
void EncodeRow(const std::vector<Cell>& row, std::string* out);

// Replaces *row with the row encoded in bytes (all of them). Fails (Corrupt)
// on bytes EncodeRow did not write.
Status DecodeRow(std::string_view bytes, std::vector<Cell>* row);

}  // namespace fanfold
