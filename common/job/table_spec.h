// TableSpec: the "tables" of a job file as written — each lookup table's
// name, file, format, key expression (over the table's rows), match
// expression (over the records) and the fields it brings — checked for shape;
// the plan loads the files and compiles the expressions (common/lookup).
// Errors name the job file and the JSON Pointer, say what was found and what
// was expected. Documented in docs/job-file.md ("tables"). Plain data.
#pragma once

#include <string>
#include <vector>

#include <nlohmann/json_fwd.hpp>

#include "common/base/status.h"
#include "common/input/byte_source.h"
#include "common/input/record_format.h"

namespace fanfold {

struct TableFieldSpec {
  std::string name;  // what records know the value by (an identifier)
  std::string expr;  // over the table's row; a bare column/member name becomes {name} or {/name}
};

struct TableSpec {
  std::string name;
  std::string path;  // as written; relative to the job file's directory
  RecordFormat format = RecordFormat::kCsv;    // given, or implied by the path
  Compression compression = Compression::kNone;  // implied by the path
  std::string key;    // expression over the table's rows
  std::string match;  // expression over the records, compared with key
  std::vector<TableFieldSpec> fields;
};

// Reads the value of "tables" (at /tables) into *out. job_path is for messages.
Status ParseTableSpecs(const nlohmann::json& tables, const std::string& job_path, std::vector<TableSpec>* out);

// Whether s is an identifier: letters, digits and _, not starting with a digit.
bool IsTableIdentifier(const std::string& s);

}  // namespace fanfold
