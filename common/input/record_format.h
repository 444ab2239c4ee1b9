// RecordFormat and its registry: one row per input record format — its name
// (the job file's "format", the run manifest, the worker's argument), the
// file-name extensions that imply it, how raw fields are named in
// expressions, whether files may be cut into chunks, and its reader's
// factory. The job-file parser, the shard list, the plan and ReadRecords all
// read these rows; adding a format is its reader plus one row here.
// Immutable after first use; thread-safe.
#pragma once

#include <memory>
#include <string>
#include <vector>

#include "common/base/status.h"

namespace fanfold {

enum class RecordFormat { kNdjson, kCsv, kTsv };
enum class ValueChecks;

class FieldTable;
class RecordReader;

struct RecordFormatRow {
  RecordFormat format;
  const char* name;  // "ndjson", "csv", ...
  // File-name endings that imply the format, before any ".zst"/".gz".
  std::vector<const char*> extensions;
  // True iff a file may be cut at line starts into independent chunks (no
  // header row that each chunk would need).
  bool chunkable;
  // Why `raw_name` cannot name a raw field in this format, as the end of
  // "field {raw_name} ..."; "" iff it can. Null iff every name can.
  std::string (*raw_field_problem)(const std::string& raw_name);
  // A reader for records of this format filling `fields` (which must
  // outlive it), judging values as `checks` says. Fails iff a raw field
  // cannot be read in this format.
  Result<std::unique_ptr<RecordReader>> (*make_reader)(const FieldTable& fields, ValueChecks checks);
};

// Every format, in RecordFormat order.
const std::vector<RecordFormatRow>& RecordFormatRows();

// The row of f. REQUIRES: f is a declared RecordFormat.
const RecordFormatRow& RecordFormatRowOf(RecordFormat f);

// The row's name ("ndjson", ...).
const char* FormatName(RecordFormat f);

// Inverse of FormatName; returns false iff text names no format.
bool FormatFromText(const std::string& text, RecordFormat* out);

// The names for messages: "\"ndjson\", \"csv\" or \"tsv\"".
std::string FormatNameList();

}  // namespace fanfold
