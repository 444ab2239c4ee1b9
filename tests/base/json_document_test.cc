// JsonDocument: the shared decode preamble (object or the caller's error,
// exceptions turned into the caller's error), syntax-error locations, and
// the lenient field reads.
#include "common/base/json_document.h"

#include <doctest/doctest.h>

#include <string>

namespace fanfold {
namespace {

Status Bad(const std::string& what) { return Status::Corrupt("doc: " + what); }

Result<int> DecodeA(std::string_view text) {
  return DecodeJsonObject<int>(text, Bad, [](const nlohmann::json& j) -> Result<int> { return j.at("a").get<int>(); });
}

// Intent: an object is handed to decode and its value comes back.
TEST_CASE("json_document: an object is decoded") {
  Result<int> r = DecodeA(R"({"a": 7})");
  REQUIRE(r.ok());
  CHECK(*r == 7);
}

// Intent: invalid JSON and valid JSON that is not an object give the same
// caller-worded error, as the manifest, summary and scale readers print it.
TEST_CASE("json_document: not an object is the caller's error") {
  for (const char* text : {"", "{", "[1, 2]", "42", "\"a\"", "null"}) {
    Result<int> r = DecodeA(text);
    REQUIRE_FALSE(r.ok());
    CHECK(r.status().message() == "doc: not a JSON object");
  }
}

// Intent: a missing key or a wrong type thrown inside decode becomes the
// caller's error carrying nlohmann's text, never an escaping exception.
TEST_CASE("json_document: exceptions inside decode become the caller's error") {
  Result<int> missing = DecodeA(R"({"b": 1})");
  REQUIRE_FALSE(missing.ok());
  CHECK(missing.status().message().rfind("doc: [json.exception.out_of_range.403]", 0) == 0);
  Result<int> wrong = DecodeA(R"({"a": "seven"})");
  REQUIRE_FALSE(wrong.ok());
  CHECK(wrong.status().message().rfind("doc: [json.exception.type_error.302]", 0) == 0);
}

// Intent: the syntax problem names line and column of the offending byte;
// Python's json.loads reports the same place for these texts
// ("Expecting value: line 2 column 8", "line 1 column 9").
TEST_CASE("json_document: syntax problems say where") {
  const std::string p1 = JsonSyntaxProblem("{\n  \"a\": }");
  CHECK(p1.rfind(" at line 2, column 8: error while parsing", 0) == 0);
  const std::string p2 = JsonSyntaxProblem("{\"a\": 1,}");
  CHECK(p2.rfind(" at line 1, column 9: ", 0) == 0);
  CHECK(JsonSyntaxProblem("{\"a\": 1}").empty());
}

// Intent: a number beyond a double's range has no position; the reason
// alone follows (RFC 8259 §6 leaves such numbers to the implementation).
TEST_CASE("json_document: an out-of-range number gives its reason") {
  const std::string p = JsonSyntaxProblem("{\"a\": 1e999}");
  CHECK(p.rfind(": ", 0) == 0);
  CHECK(p.find("number overflow") != std::string::npos);
}

// Intent: lenient reads fall back on a missing key, null and a wrong type,
// and JsonObjectOrEmpty gives an empty object for anything but an object.
TEST_CASE("json_document: lenient field reads") {
  const nlohmann::json j = nlohmann::json::parse(R"({"n": 5, "s": "x", "z": null, "o": {"k": 1}, "a": [1]})");
  CHECK(JsonValueOr<int>(j, "n", -1) == 5);
  CHECK(JsonValueOr<int>(j, "missing", -1) == -1);
  CHECK(JsonValueOr<int>(j, "z", -1) == -1);
  CHECK(JsonValueOr<int>(j, "s", -1) == -1);
  CHECK(JsonValueOr<std::string>(j, "s", "") == "x");
  CHECK(JsonObjectOrEmpty(j, "o").at("k") == 1);
  CHECK(JsonObjectOrEmpty(j, "a").empty());
  CHECK(JsonObjectOrEmpty(j, "missing").is_object());
}

}  // namespace
}  // namespace fanfold
