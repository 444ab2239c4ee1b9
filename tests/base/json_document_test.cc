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

// Intent: valid JSON that is not an object is the caller's error; invalid
// JSON says where it broke (json_syntax_test.cc checks the places).
TEST_CASE("json_document: not an object is the caller's error") {
  for (const char* text : {"[1, 2]", "42", "\"a\"", "null"}) {
    Result<int> r = DecodeA(text);
    REQUIRE_FALSE(r.ok());
    CHECK(r.status().message() == "doc: not a JSON object");
  }
  Result<int> r = DecodeA("{");
  REQUIRE_FALSE(r.ok());
  CHECK(r.status().message().rfind("doc: not valid JSON at line 1, column 2: expected a key", 0) == 0);
}

// Intent: a missing key or a wrong type thrown inside decode becomes the
// caller's error in our words, never an escaping exception nor nlohmann's text.
TEST_CASE("json_document: exceptions inside decode become the caller's error") {
  Result<int> missing = DecodeA(R"({"b": 1})");
  REQUIRE_FALSE(missing.ok());
  CHECK(missing.status().message() == "doc: found no \"a\" key where one belongs");
  Result<int> wrong = DecodeA(R"({"a": "seven"})");
  REQUIRE_FALSE(wrong.ok());
  CHECK(wrong.status().message() == "doc: found a string where a number belongs");
  Result<int> scalar = DecodeJsonObject<int>(
      R"({"a": 1})", Bad, [](const nlohmann::json& j) -> Result<int> { return j.at("a").at("b").get<int>(); });
  REQUIRE_FALSE(scalar.ok());
  CHECK(scalar.status().message() == "doc: found a number where an object belongs");
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
