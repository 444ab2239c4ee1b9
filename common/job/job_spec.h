// JobSpec: a job file as written — inputs, the shared filter and derived
// fields, and one or more reductions (each its own filter, derived fields,
// group keys, measures, rows step and output options) — validated for shape
// and types but with expressions still as text (Plan compiles them). Errors name the job file
// and the JSON Pointer (RFC 6901) of the offending value, say what was found
// and what was expected. The schema is documented in docs/job-file.md.
// Plain data; thread-compatible.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "common/measures/measure.h"
#include "common/input/decode_ahead.h"
#include "common/input/record_reader.h"
#include "common/job/table_spec.h"
#include "common/base/status.h"

namespace fanfold {

enum class OutputFormat { kCsv, kJson, kNdjson, kTable };

struct DeriveSpec {
  std::string name;
  std::string expr;
};

struct MeasureSpec {
  std::string name;
  std::string fn;      // the job file's name for config.kind, e.g. "ddsketch"
  MeasureConfig config;
  std::string of;      // argument expression ("" for count)
  std::string by;      // ordering expression (at_lowest/at_highest only)
  // The measure's own filter: it reads only records (kept by "keep") for
  // which this expression is true; "" = every record. In the fingerprint.
  std::string only;
  // > 0: CSV/table floats of this measure's columns shown with this many
  // significant digits (over emit.digits; --digits overrides). Display only:
  // not in the plan's fingerprint, so resume reuses partials either way.
  int shown_digits = 0;
};

struct OrderSpec {
  std::string by;      // an output column name
  bool descending = false;
};

// A column computed from the finished columns of a result row ("rows.add").
struct AddedColumnSpec {
  std::string name;
  std::string expr;
  int shown_digits = 0;  // as MeasureSpec::shown_digits: display only
};

// What happens to result rows after the merge, before ordering and limit
// ("rows" in the job file). Not in the plan fingerprint: partials never
// depend on it, so resume reuses every one when only this changes.
struct RowsSpec {
  std::vector<AddedColumnSpec> add;  // in order; each may read the earlier ones
  std::string keep;                  // "" = keep every row
  bool given = false;                // the job file has a "rows" object
};

struct EmitSpec {
  OutputFormat format = OutputFormat::kTable;
  bool format_given = false;  // the job file sets "format" (a -o extension may not contradict it)
  std::string path;    // "" = stdout; relative paths are relative to the job file
  std::vector<OrderSpec> order;
  std::optional<uint64_t> limit;
  int digits = 0;  // > 0: CSV/table floats shown with this many significant digits (--digits overrides)
};

// One reduction: what to group by, compute and print over the records the
// job's shared filter kept. A job file without "reductions" has exactly one,
// unnamed, whose keys sit at the top level.
struct ReductionSpec {
  std::string name;     // "" iff the job has no "reductions" array
  std::string pointer;  // JSON Pointer of its object: "" (top level) or "/reductions/N"
  std::string keep;     // "" = every record the job's filter kept
  std::vector<DeriveSpec> derive;  // its own derived fields, after the job's
  std::vector<std::string> group;
  std::vector<MeasureSpec> measures;
  RowsSpec rows;
  EmitSpec emit;
};

struct JobSpec {
  std::string job_path;   // as given by the user
  std::string base_dir;   // directory that relative paths start from
  std::string source_text;  // LoadJobSpec: the file's bytes as read (the run directory keeps a copy)
  std::string about;
  std::vector<std::string> files;   // patterns and paths, as written
  std::optional<RecordFormat> format;  // absent = inferred per file name
  std::optional<double> bad_record_limit;
  uint64_t chunk_bytes = 0;         // 0 = never cut files into chunks
  // NDJSON: also check the spelling of numbers and true/false/null that no
  // field reads (ValueChecks::kEveryValue); changes which lines are malformed,
  // so it is in the plan's fingerprint.
  bool check_unread_values = false;
  // "decode_ahead": whether workers decompress on a helper thread while they
  // parse (common/input/decode_ahead.h). Never in the plan's fingerprint:
  // results do not depend on it.
  AheadChoice decode_ahead = AheadChoice::kAuto;
  std::string keep;                 // "" = keep every record (shared by every reduction)
  std::vector<TableSpec> tables;    // lookup tables, job-level (table_spec.h)
  std::vector<DeriveSpec> derive;   // shared by every reduction
  std::vector<ReductionSpec> reductions;  // at least one
  // "memory_cap": the coordinator's memory budget in bytes (an integer, or
  // a string such as "512MiB"); absent = the CLI's --memory-cap or the
  // default from the machine's memory. Never in the plan's fingerprint:
  // results do not depend on it.
  std::optional<uint64_t> memory_cap;
  // True iff the file has a "reductions" array (names are then non-empty
  // and each reduction's result file is named after it).
  bool named_reductions() const { return !reductions.empty() && !reductions.front().name.empty(); }
};

// Parses the text of a job file. job_path is used in messages and for
// base_dir.
Result<JobSpec> ParseJobSpec(std::string_view json_text, const std::string& job_path);

// Reads and parses the job file at path.
Result<JobSpec> LoadJobSpec(const std::string& path);

// The job file's name for a measure kind ("count", "ddsketch", ...).
// FormatName and FormatFromText are in common/input/record_format.h.
const char* MeasureFnName(MeasureKind kind);
const char* OutputFormatName(OutputFormat f);

}  // namespace fanfold
