#include "common/input/record_format.h"

#include <cstdlib>

#include "common/input/csv/csv_reader.h"
#include "common/input/ndjson_reader.h"
#include "common/input/record_reader.h"

namespace fanfold {
namespace {

// NDJSON fields are JSON Pointers (RFC 6901); a bare name is most likely a
// CSV habit, so the message shows the pointer the user probably meant.
std::string NotAJsonPointer(const std::string& raw_name) {
  if (!raw_name.empty() && raw_name[0] == '/') return "";
  return "is not a JSON Pointer; expected NDJSON fields written like {/" + raw_name + "} (RFC 6901)";
}

Result<std::unique_ptr<RecordReader>> MakeNdjsonReader(const FieldTable& fields, ValueChecks checks) {
  Result<std::unique_ptr<NdjsonReader>> r = NdjsonReader::Create(fields, ChunkOptions{}, checks);
  if (!r.ok()) return r.status();
  return std::unique_ptr<RecordReader>(std::move(r.value()));
}

template <char kSeparator>
Result<std::unique_ptr<RecordReader>> MakeSeparatedReader(const FieldTable& fields, ValueChecks /*checks*/) {
  return std::unique_ptr<RecordReader>(std::make_unique<CsvReader>(fields, kSeparator));
}

std::vector<RecordFormatRow> BuildRows() {
  return {
      {RecordFormat::kNdjson, "ndjson", {".ndjson", ".jsonl"}, true, NotAJsonPointer, MakeNdjsonReader},
      {RecordFormat::kCsv, "csv", {".csv"}, false, nullptr, MakeSeparatedReader<','>},
      {RecordFormat::kTsv, "tsv", {".tsv"}, false, nullptr, MakeSeparatedReader<'\t'>},
  };
}

}  // namespace

const std::vector<RecordFormatRow>& RecordFormatRows() {
  static const std::vector<RecordFormatRow>* rows = [] {
    auto* r = new std::vector<RecordFormatRow>(BuildRows());
    // Rows are looked up by format as an index.
    for (size_t i = 0; i < r->size(); ++i)
      if (static_cast<size_t>((*r)[i].format) != i) std::abort();
    return r;
  }();
  return *rows;
}

const RecordFormatRow& RecordFormatRowOf(RecordFormat f) { return RecordFormatRows()[static_cast<size_t>(f)]; }

const char* FormatName(RecordFormat f) { return RecordFormatRowOf(f).name; }

bool FormatFromText(const std::string& text, RecordFormat* out) {
  for (const RecordFormatRow& row : RecordFormatRows()) {
    if (text == row.name) {
      *out = row.format;
      return true;
    }
  }
  return false;
}

std::string FormatNameList() {
  const auto& rows = RecordFormatRows();
  std::string out;
  for (size_t i = 0; i < rows.size(); ++i) {
    if (i > 0) out += i + 1 == rows.size() ? " or " : ", ";
    out += std::string("\"") + rows[i].name + "\"";
  }
  return out;
}

}  // namespace fanfold
