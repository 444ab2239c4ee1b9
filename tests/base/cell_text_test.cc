// Cell text: JSON string escaping, the JSON and plain-text forms of each
// cell kind.
#include "common/base/cell_text.h"

#include <doctest/doctest.h>

#include <cmath>
#include <limits>
#include <string>

namespace fanfold {
namespace {

// Intent: RFC 8259 §7 escaping; the expected text is Python's
// json.dumps(s, ensure_ascii=False) of the same string.
TEST_CASE("cell_text: JSON string escaping") {
  std::string out;
  AppendJsonString("q\"b\\n\n\t\x01\x7f\xc3\xa9", &out);
  CHECK(out == "\"q\\\"b\\\\n\\n\\t\\u0001\x7f\xc3\xa9\"");
  out.clear();
  AppendJsonString("\r\x1f", &out);
  CHECK(out == "\"\\r\\u001f\"");  // Python: json.dumps('\r\x1f') == '"\\r\\u001f"'
}

// Intent: each kind's JSON text; non-finite numbers become the strings CSV and the table print (RFC 8259
// section 6 has no NaN or infinity literal).
TEST_CASE("cell_text: CellJson per kind") {
  CHECK(CellJson(Cell::Null()) == "null");
  CHECK(CellJson(Cell::Bool(true)) == "true");
  CHECK(CellJson(Cell::Int(-42)) == "-42");
  CHECK(CellJson(Cell::Float(0.1)) == "0.1");  // shortest round trip, as Python's repr(0.1)
  CHECK(CellJson(Cell::Float(std::numeric_limits<double>::quiet_NaN())) == "\"nan\"");
  CHECK(CellJson(Cell::Float(INFINITY)) == "\"inf\"");
  CHECK(CellJson(Cell::Float(-INFINITY)) == "\"-inf\"");
  CHECK(CellJson(Cell::String("a\"b")) == "\"a\\\"b\"");
  CHECK(CellJson(Cell::List({Cell::Int(1), Cell::String("x")})) == "[1,\"x\"]");
  CHECK(CellJson(Cell::Record({"k", "n"}, {Cell::String("v"), Cell::Null()})) == "{\"k\":\"v\",\"n\":null}");
}

// Intent: the plain form for CSV and tables: empty for null, strings as
// they are, containers as compact JSON.
TEST_CASE("cell_text: CellText per kind") {
  CHECK(CellText(Cell::Null()).empty());
  CHECK(CellText(Cell::String("a,b")) == "a,b");
  CHECK(CellText(Cell::Bool(false)) == "false");
  CHECK(CellText(Cell::Int(7)) == "7");
  CHECK(CellText(Cell::Float(2.5)) == "2.5");
  CHECK(CellText(Cell::List({Cell::Int(1), Cell::Int(2)})) == "[1,2]");
}

}  // namespace
}  // namespace fanfold
