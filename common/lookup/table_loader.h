// LoadLookupTable: reads one lookup table file (CSV, TSV or NDJSON, plain,
// .zst or .gz) whole into a LookupTable: each row's key expression gives its
// key and each field's expression its value, evaluated once, here. A table
// must be exact: a malformed row, a row without a usable key, a key seen
// twice (both lines named) or a table past its limits is an error naming the
// file and line; nothing is skipped. Runs while a plan is compiled (the
// coordinator's, and once in each worker); single-threaded; the result is
// immutable.
#pragma once

#include <cstdint>
#include <memory>
#include <string>
#include <vector>

#include "common/base/status.h"
#include "common/input/byte_source.h"
#include "common/input/record_format.h"
#include "common/lookup/lookup_table.h"

namespace fanfold {

// The documented limits of one table (docs/job-file.md, "tables").
struct TableLimits {
  uint64_t max_bytes = uint64_t{64} << 20;  // decompressed bytes: 64 MiB
  uint64_t max_rows = 1'000'000;
};

// One expression over the table's own rows and where the job file has it.
struct TableExpr {
  std::string text;     // e.g. "{lamp_id}" (CSV/TSV) or "{/id}" (NDJSON)
  std::string pointer;  // JSON Pointer in the job file, for messages
};

struct TableSource {
  std::string job_path;  // for messages: "<job_path>: <pointer>: ..."
  std::string pointer;   // the table's JSON Pointer in the job file ("/tables/0")
  std::string name;      // the table's name in the job file
  std::string path;      // absolute path of the file
  RecordFormat format = RecordFormat::kCsv;
  Compression compression = Compression::kNone;
  TableExpr key;
  std::vector<std::string> field_names;  // what records know the values by
  std::vector<TableExpr> field_exprs;    // one per name
};

// Loads `source`. Every error names the job file and a JSON Pointer;
// errors in the table's file then name its path and line
// ("job.json: /tables/0: lookup table \"lamps\" '/abs/lamps.csv' line 7: ...").
Result<std::shared_ptr<const LookupTable>> LoadLookupTable(const TableSource& source,
                                                           const TableLimits& limits = {});

}  // namespace fanfold
