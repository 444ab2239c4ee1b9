// Tests for sorting and rendering the result table.
#include <doctest/doctest.h>

#include "coordinator/output/output_table.h"

#include <cmath>

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

TEST_CASE("the aligned table tells null from the empty string") {
  // Intent: a null key or value reads "(null)"; an empty string stays blank; CSV keeps both empty
  // and JSON keeps null apart from "".
  OutputTable t;
  t.columns = {"k", "top"};
  t.key_columns = 1;
  t.rows.push_back({Cell::Null(), Cell::List({Cell::Record({"value", "count"}, {Cell::Null(), Cell::Int(2)})})});
  t.rows.push_back({Cell::String(""), Cell::Null()});
  CHECK(RenderTable(t, OutputFormat::kTable) ==
        "k       top\n"
        "------  ----------\n"
        "(null)  (null) (2)\n"
        "        (null)\n");
  CHECK(RenderTable(t, OutputFormat::kCsv) == "k,top\n,\"[{\"\"value\"\":null,\"\"count\"\":2}]\"\n,\n");
  CHECK(RenderTable(t, OutputFormat::kNdjson) ==
        "{\"k\":null,\"top\":[{\"value\":null,\"count\":2}]}\n{\"k\":\"\",\"top\":null}\n");
}

TEST_CASE("--digits rounds CSV and table floats as Python's format(x, '.Ng') does") {
  // Intent: correct rounding with ties to even on the double's exact value; each
  // expected text is Python 3's format(x, '.%dg' % n) for that x and n.
  struct Case {
    double x;
    int n;
    const char* python;
  };
  const Case cases[] = {
      {0.125, 2, "0.12"},          {0.375, 2, "0.38"},  {2.675, 3, "2.67"},    {1234567.0, 3, "1.23e+06"},
      {0.1 + 0.2, 3, "0.3"},       {1e21, 2, "1e+21"},  {-1.2345e-05, 2, "-1.2e-05"}, {2.5, 1, "2"},
      {3.5, 1, "4"},               {1.0 / 3, 5, "0.33333"}, {99.95, 3, "100"}, {123456.0, 6, "123456"},
  };
  for (const Case& c : cases) {
    OutputTable t;
    t.columns = {"x"};
    t.rows.push_back({Cell::Float(c.x)});
    CAPTURE(c.x);
    CAPTURE(c.n);
    CHECK(RenderTable(t, OutputFormat::kCsv, {.digits = c.n}) == std::string("x\n") + c.python + "\n");
  }
}

TEST_CASE("--digits leaves integers, JSON, NDJSON and non-finite numbers whole") {
  // Intent: rounding is for reading; counts stay exact and JSON keeps every digit.
  OutputTable t;
  t.columns = {"n", "x"};
  t.rows.push_back({Cell::Int(123456789), Cell::Float(0.1 + 0.2)});
  t.rows.push_back({Cell::Int(-5), Cell::Float(-0.0)});
  CHECK(RenderTable(t, OutputFormat::kCsv, {.digits = 2}) == "n,x\n123456789,0.3\n-5,0\n");
  CHECK(RenderTable(t, OutputFormat::kNdjson, {.digits = 2}) ==
        "{\"n\":123456789,\"x\":0.30000000000000004}\n{\"n\":-5,\"x\":0}\n");
  CHECK(RenderTable(t, OutputFormat::kTable, {.digits = 2}) ==
        "n          x\n"
        "---------  ---\n"
        "123456789  0.3\n"
        "       -5    0\n");
}

TEST_CASE("a column's own digits override the table's") {
  // Intent: column_digits (a measure's shown_digits) rounds its column, others
  // keep the table-wide digits (or every digit at 0); texts from Python's
  // format(1/3, '.3g') = 0.333, format(2/3, '.5g') = 0.66667, format(1/7, '.2g') = 0.14.
  OutputTable t;
  t.columns = {"k", "a", "b"};
  t.key_columns = 1;
  t.rows.push_back({Cell::Float(1.0 / 7), Cell::Float(1.0 / 3), Cell::Float(2.0 / 3)});
  RenderOptions o;
  o.column_digits = {0, 3, 0};
  CHECK(RenderTable(t, OutputFormat::kCsv, o) == "k,a,b\n0.14285714285714285,0.333,0.6666666666666666\n");
  o.digits = 2;
  o.column_digits = {0, 3, 5};
  CHECK(RenderTable(t, OutputFormat::kCsv, o) == "k,a,b\n0.14,0.333,0.66667\n");
  CHECK(RenderTable(t, OutputFormat::kTable, o) == "k     a      b\n----  -----  -------\n0.14  0.333  0.66667\n");
  CHECK(RenderTable(t, OutputFormat::kJson, o) ==
        "[\n {\"k\":0.14285714285714285,\"a\":0.3333333333333333,\"b\":0.6666666666666666}\n]\n");
}

TEST_CASE("an infinite or NaN result reads the same in every format") {
  // Intent: "inf", "-inf", "nan" everywhere (JSON as strings, since RFC 8259 has
  // no literal for them); Python's float() reads each text back to the same value.
  OutputTable t;
  t.columns = {"x"};
  t.rows.push_back({Cell::Float(HUGE_VAL)});
  t.rows.push_back({Cell::Float(-HUGE_VAL)});
  t.rows.push_back({Cell::Float(std::nan(""))});
  CHECK(RenderTable(t, OutputFormat::kCsv) == "x\ninf\n-inf\nnan\n");
  CHECK(RenderTable(t, OutputFormat::kCsv, {.digits = 3}) == "x\ninf\n-inf\nnan\n");
  CHECK(RenderTable(t, OutputFormat::kTable) == "x\n----\n inf\n-inf\n nan\n");
  CHECK(RenderTable(t, OutputFormat::kNdjson) == "{\"x\":\"inf\"}\n{\"x\":\"-inf\"}\n{\"x\":\"nan\"}\n");
  CHECK(RenderTable(t, OutputFormat::kJson) == "[\n {\"x\":\"inf\"},\n {\"x\":\"-inf\"},\n {\"x\":\"nan\"}\n]\n");
}
