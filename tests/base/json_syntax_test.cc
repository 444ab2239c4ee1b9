// JsonSyntaxProblem: where a text stops being JSON and what was expected
// there, in our words; positions checked against Python's json module.
#include "common/base/json_syntax.h"

#include <random>
#include <string>

#include <doctest/doctest.h>
#include <nlohmann/json.hpp>

#include "tests/base/text_edit_test_util.h"

namespace fanfold {
namespace {

// " at line L, column C: " of a problem text.
std::string Place(const std::string& problem) { return problem.substr(0, problem.find(": ") + 2); }

// Intent: the position of the first offending character is the one Python's
// json.loads reports for the same text (Python 3.11: "Expecting value: line 2
// column 8", "Expecting property name ...: line 1 column 9", ...); columns
// count characters, not bytes ("é" is one).
TEST_CASE("json_syntax: positions agree with Python's json.loads") {
  const struct {
    const char* text;
    const char* place;  // from json.loads(text) raising JSONDecodeError
  } cases[] = {
      {"{\n  \"a\": }", " at line 2, column 8: "},
      {"{\"a\": 1,}", " at line 1, column 9: "},
      {"[1,]", " at line 1, column 4: "},
      {"{\"a\" 1}", " at line 1, column 6: "},
      {"{\"a\": 1 \"b\": 2}", " at line 1, column 9: "},
      {"{\"a\": 1} x", " at line 1, column 10: "},
      {"{\"\xc3\xa9\": x}", " at line 1, column 7: "},
      {"{\"a\": [1, 2}", " at line 1, column 12: "},
      {"", " at line 1, column 1: "},
      {"{\"a\": \"b\\q\"}", " at line 1, column 9: "},
  };
  for (const auto& c : cases) {
    CAPTURE(c.text);
    CHECK(Place(JsonSyntaxProblem(c.text)) == c.place);
  }
}

// Intent: valid JSON (RFC 8259 §2-§7, with a leading byte-order mark) has no problem.
TEST_CASE("json_syntax: valid texts") {
  for (const char* text : {"{}", "[]", "{\"a\": [1, -2.5e3, true, false, null, \"\\u00e9\\ud83d\\ude00\"]}", " 0 ",
                           "\xef\xbb\xbf{\"a\": {}}", "[[[]], {}]"}) {
    CAPTURE(text);
    CHECK(JsonSyntaxProblem(text) == "");
  }
}

// Intent: each message says what was expected and what was found, with the
// hint for the usual slips (trailing comma, comments, quotes, case, truncation).
TEST_CASE("json_syntax: what was expected") {
  CHECK(JsonSyntaxProblem("[1,]") ==
        " at line 1, column 4: expected a value after ',', found ']' (JSON allows no comma before ']')");
  CHECK(JsonSyntaxProblem("{\"a\": 1,}") ==
        " at line 1, column 9: expected a key in double quotes after ',', found '}' (JSON allows no comma before '}')");
  CHECK(JsonSyntaxProblem("{\"a\": [1,\n 2") ==
        " at line 2, column 3: expected ',' or ']' after an array element, found the end of the text (the array "
        "opened at line 1, column 7 is not closed)");
  CHECK(JsonSyntaxProblem("{'a': 1}") ==
        " at line 1, column 2: expected a key in double quotes or '}', found \"'\" (JSON strings use double quotes)");
  CHECK(JsonSyntaxProblem("{\"a\": 1 // x\n}") ==
        " at line 1, column 9: expected ',' or '}' after the value of \"a\", found '/'");
  CHECK(JsonSyntaxProblem("{\"a\": True}") ==
        " at line 1, column 7: expected a value (an object, array, string, number, true, false or null), found "
        "'True' (JSON writes true, false and null in lower case)");
  CHECK(JsonSyntaxProblem("{\"a\": \"x") ==
        " at line 1, column 9: expected '\"' to close the string that starts at line 1, column 7, found the end of "
        "the text");
  CHECK(JsonSyntaxProblem("{\"a\": 1e999}") ==
        " at line 1, column 7: found the number 1e999, too large for a double; expected a number of magnitude below "
        "1.8e308");
  CHECK(JsonSyntaxProblem("{\"a\": 01}") ==
        " at line 1, column 7: found a number with a leading zero; expected 0 or a number starting with 1-9");
  CHECK(JsonSyntaxProblem("{\"a\": \"\\ud800\"}") ==
        " at line 1, column 8: found the high surrogate \\ud800 alone; expected a low surrogate \\uDC00-\\uDFFF "
        "right after it");
  CHECK(JsonSyntaxProblem("{\"a\": \"\xff\"}") ==
        " at line 1, column 8: found a byte that is not UTF-8 inside a string; expected UTF-8 text");
  CHECK(JsonSyntaxProblem("\xef\xbb\xbf{\"a\" 1}") ==
        " at line 1, column 6: expected ':' after the key \"a\", found '1'");  // the mark is no column
}

// Intent: a text nested far deeper than any stack would allow is scanned
// without recursion (the fuzzers feed such texts to the job-file parser).
TEST_CASE("json_syntax: deep nesting") {
  const std::string deep = std::string(200000, '[') + std::string(200000, ']');
  CHECK(JsonSyntaxProblem(deep) == "");
  CHECK(Place(JsonSyntaxProblem(std::string(200000, '['))) == " at line 1, column 200001: ");
}

// Intent: the scanner and the JSON reader (nlohmann's accept) agree on which
// texts are JSON, for every prefix of a job file, every one-byte deletion and
// every one-byte replacement by a character that commonly breaks JSON; the
// reader refusing a text the scanner passes would leave a message without a place.
TEST_CASE("json_syntax: agrees with the JSON reader on mutated job files") {
  const std::string job =
      "\xef\xbb\xbf{\n  \"about\": \"caf\xc3\xa9 \\u00e9 \\\"q\\\"\",\n  \"inputs\": {\"files\": [\"a/*.ndjson\"], "
      "\"bad_record_limit\": 0.05},\n  \"group\": [],\n  \"measures\": [{\"name\": \"n\", \"fn\": \"count\", "
      "\"at\": [-1.5e-3, 0, 10, true, false, null]}]\n}\n";
  REQUIRE(nlohmann::json::accept(job));
  size_t texts = 0;
  auto agree = [&](const std::string& text) {
    ++texts;
    const bool reader = nlohmann::json::accept(text);
    const std::string problem = JsonSyntaxProblem(text);
    CAPTURE(text);
    CAPTURE(problem);
    CHECK(reader == problem.empty());
  };
  for (size_t n = 0; n <= job.size(); ++n) agree(job.substr(0, n));
  for (size_t i = 0; i < job.size(); ++i) agree(job.substr(0, i) + job.substr(i + 1));
  for (size_t i = 0; i < job.size(); ++i)
    for (char c : std::string(",:]}[{\"'\\x0-.e \n\t\x01\xff")) agree(job.substr(0, i) + c + job.substr(i + 1));
  CHECK(texts > 3000);
}

// Intent: the same agreement on random edits (seeded, so the same texts every
// run): up to four insertions, deletions or replacements by JSON's structural
// characters, quotes, escapes, digits, control and non-UTF-8 bytes.
TEST_CASE("json_syntax: agrees with the JSON reader on random edits") {
  std::mt19937 rng(20261202);
  const std::string seeds[] = {
      "{\"inputs\": {\"files\": [\"a\"]}, \"measures\": [{\"name\": \"n\", \"fn\": \"count\", \"at\": [1.5e3, -0, "
      "true, null]}], \"s\": \"\\u00e9\\ud83d\\ude00\\n\"}",
      "[[[{}]], \"x\", 1, {\"a\": {\"b\": []}}]", "\xef\xbb\xbf{\"a\": \"caf\xc3\xa9\"}"};
  const std::string alphabet = "{}[]:,\"\\'0123456789.eE+-tfnrulsx \n\t\x01\xff\xc3\xa9u/";
  int disagreements = 0;
  for (int iter = 0; iter < 20000; ++iter) {
    std::string t = seeds[rng() % 3];
    for (int e = 0, edits = 1 + static_cast<int>(rng() % 4); e < edits; ++e) {
      const size_t pos = rng() % (t.size() + 1);
      const char c = alphabet[rng() % alphabet.size()];
      EditOneByte(&t, pos, c, rng());
    }
    if (nlohmann::json::accept(t) != JsonSyntaxProblem(t).empty() && ++disagreements <= 5) {
      CAPTURE(t);
      CHECK(nlohmann::json::accept(t) == JsonSyntaxProblem(t).empty());
    }
  }
  CHECK(disagreements == 0);
}

}  // namespace
}  // namespace fanfold
