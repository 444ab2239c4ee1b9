// Tests for sorting and rendering the result table.
#include <doctest/doctest.h>

#include "coordinator/output/output_table.h"

using namespace fanfold;

namespace {
OutputTable Sample() {
  OutputTable t;
  t.columns = {"district", "events", "avg"};
  t.key_columns = 1;
  t.rows.push_back({Cell::String("Quillmoor"), Cell::Int(5), Cell::Float(0.1 + 0.2)});
  t.rows.push_back({Cell::String("Ash, \"North\""), Cell::Int(12), Cell::Null()});
  t.rows.push_back({Cell::Null(), Cell::Int(5), Cell::Float(1e21)});
  return t;
}
}  // namespace

TEST_CASE("default order is by key; explicit order breaks ties by key") {
  // Intent: null keys first, then bytewise; desc on a measure with key tie-break.
  OutputTable t = Sample();
  SortRows(&t, {});
  CHECK(t.rows[0][0].kind == Cell::Kind::kNull);
  CHECK(t.rows[1][0].str == "Ash, \"North\"");
  SortRows(&t, {{"events", true}});
  CHECK(t.rows[0][1].integer == 12);
  CHECK(t.rows[1][0].kind == Cell::Kind::kNull);  // tie at 5: key order
  CHECK(t.rows[2][0].str == "Quillmoor");
}

TEST_CASE("CSV follows RFC 4180 quoting and prints shortest round-trip numbers") {
  // Intent: 0.1+0.2 prints as 0.30000000000000004 (shortest text that parses back
  // to the same double, as Python's repr() does), null as an empty cell.
  OutputTable t = Sample();
  SortRows(&t, {});
  CHECK(RenderTable(t, OutputFormat::kCsv) ==
        "district,events,avg\n"
        ",5,1e+21\n"
        "\"Ash, \"\"North\"\"\",12,\n"
        "Quillmoor,5,0.30000000000000004\n");
}

TEST_CASE("JSON and NDJSON give one object per row") {
  // Intent: valid JSON, null for missing values.
  OutputTable t = Sample();
  SortRows(&t, {});
  CHECK(RenderTable(t, OutputFormat::kNdjson) ==
        "{\"district\":null,\"events\":5,\"avg\":1e+21}\n"
        "{\"district\":\"Ash, \\\"North\\\"\",\"events\":12,\"avg\":null}\n"
        "{\"district\":\"Quillmoor\",\"events\":5,\"avg\":0.30000000000000004}\n");
  std::string json = RenderTable(t, OutputFormat::kJson);
  CHECK(json.front() == '[');
  CHECK(json.find("\"events\":12") != std::string::npos);
}

TEST_CASE("the aligned table right-aligns numbers") {
  // Intent: a readable terminal table with no trailing spaces.
  OutputTable t;
  t.columns = {"k", "n"};
  t.key_columns = 1;
  t.rows.push_back({Cell::String("a"), Cell::Int(5)});
  t.rows.push_back({Cell::String("bb"), Cell::Int(123)});
  CHECK(RenderTable(t, OutputFormat::kTable) ==
        "k   n\n"
        "--  ---\n"
        "a     5\n"
        "bb  123\n");
}
