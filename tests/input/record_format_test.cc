// Tests for the record-format registry (common/input/record_format.h): one
// row per format found by name and by file name, the readers its factories
// make read their own format, raw-field naming, and docs/job-file.md names
// every format and extension.
#include "common/input/record_format.h"

#include <doctest/doctest.h>

#include <fstream>
#include <set>
#include <sstream>

#include "common/input/record_reader.h"
#include "common/job/shard_list.h"

namespace fanfold {
namespace {

// Keeps each record's two raw slots as "a|b" (strings as written, numbers as
// integers): enough to tell the three formats read the same records.
class TwoFields : public RecordSink {
 public:
  bool OnRecord(Value* slots) override {
    std::string row;
    for (int i = 0; i < 2; ++i) {
      if (i > 0) row += '|';
      if (slots[i].kind == ValueKind::kString) row.append(slots[i].str);
      else if (slots[i].kind == ValueKind::kNumber) row += std::to_string(static_cast<int>(slots[i].number));
      else row += '?';
    }
    rows.push_back(row);
    return true;
  }
  std::vector<std::string> rows;
};

// Intent: rows are in enum order with distinct names, and FormatFromText is
// the inverse of FormatName.
TEST_CASE("record formats: one row per format, found by name") {
  std::set<std::string> names;
  for (size_t i = 0; i < RecordFormatRows().size(); ++i) {
    const RecordFormatRow& row = RecordFormatRows()[i];
    CHECK(static_cast<size_t>(row.format) == i);
    CHECK(names.insert(row.name).second);
    CHECK(&RecordFormatRowOf(row.format) == &row);
    RecordFormat f;
    REQUIRE(FormatFromText(row.name, &f));
    CHECK(f == row.format);
    CHECK(std::string(FormatName(f)) == row.name);
  }
  RecordFormat f;
  CHECK_FALSE(FormatFromText("json", &f));
  CHECK_FALSE(FormatFromText("", &f));
  CHECK(FormatNameList() == "\"ndjson\", \"csv\" or \"tsv\"");
}

// Intent: each extension implies its row's format, also before .zst/.gz;
// other names imply nothing.
TEST_CASE("record formats: a file name implies its format") {
  for (const RecordFormatRow& row : RecordFormatRows()) {
    for (const char* ext : row.extensions) {
      for (const char* compression : {"", ".zst", ".gz"}) {
        const std::string name = std::string("/d/part-1") + ext + compression;
        INFO(name);
        RecordFormat f;
        REQUIRE(FormatFromName(name, &f));
        CHECK(f == row.format);
      }
    }
  }
  RecordFormat f;
  CHECK_FALSE(FormatFromName("/d/part-1.json", &f));
  CHECK_FALSE(FormatFromName("/d/part-1.zst", &f));
}

// Intent: NDJSON names raw fields by JSON Pointer and says so; the separated
// formats accept any column name.
TEST_CASE("record formats: how raw fields are named") {
  const auto ndjson = RecordFormatRowOf(RecordFormat::kNdjson).raw_field_problem;
  REQUIRE((ndjson != nullptr));
  CHECK(ndjson("/a/b").empty());
  CHECK(ndjson("a") == "is not a JSON Pointer; expected NDJSON fields written like {/a} (RFC 6901)");
  CHECK(ndjson("").find("is not a JSON Pointer") == 0);
  CHECK((RecordFormatRowOf(RecordFormat::kCsv).raw_field_problem == nullptr));
  CHECK((RecordFormatRowOf(RecordFormat::kTsv).raw_field_problem == nullptr));
  CHECK(RecordFormatRowOf(RecordFormat::kNdjson).chunkable);
  CHECK_FALSE(RecordFormatRowOf(RecordFormat::kCsv).chunkable);  // a chunk would lack the header row
}

// Intent: the reader each row makes reads that row's format (the same two
// records written three ways).
TEST_CASE("record formats: each factory's reader reads its format") {
  const std::pair<RecordFormat, std::string> inputs[] = {
      {RecordFormat::kNdjson, "{\"a\": \"x\", \"b\": 1}\n{\"a\": \"y\", \"b\": 2}\n"},
      {RecordFormat::kCsv, "a,b\nx,1\ny,2\n"},
      {RecordFormat::kTsv, "a\tb\nx\t1\ny\t2\n"},
  };
  REQUIRE(std::size(inputs) == RecordFormatRows().size());
  for (const auto& [format, text] : inputs) {
    INFO(std::string(FormatName(format)));
    FieldTable fields;
    const bool pointers = format == RecordFormat::kNdjson;
    fields.InternField(pointers ? "/a" : "a");
    fields.InternField(pointers ? "/b" : "b");
    Result<std::unique_ptr<RecordReader>> reader = RecordReader::Create(format, fields);
    REQUIRE(reader.ok());
    auto src = MemorySource(text);
    TwoFields sink;
    ReadStats stats;
    REQUIRE((*reader)->Read(*src, sink, &stats).ok());
    CHECK(sink.rows == std::vector<std::string>{"x|1", "y|2"});
  }
}

// Intent: the user's documentation names every format and every extension.
TEST_CASE("record formats: docs/job-file.md names every format and extension") {
  std::ifstream in(std::string(FANFOLD_SOURCE_DIR) + "/docs/job-file.md");
  REQUIRE(in.good());
  std::stringstream ss;
  ss << in.rdbuf();
  const std::string doc = ss.str();
  for (const RecordFormatRow& row : RecordFormatRows()) {
    CHECK(doc.find(std::string("`\"") + row.name + "\"`") != std::string::npos);
    for (const char* ext : row.extensions) CHECK(doc.find(std::string("`") + ext + "`") != std::string::npos);
  }
}

}  // namespace
}  // namespace fanfold
