// Tests for NdjsonLineParser (common/input/ndjson_line_parser.h): numbers
// beyond 64 bits through the reader. External reference: Python's json
// module (named beside each check).
#include "common/input/ndjson_line_parser.h"

#include <doctest/doctest.h>

#include <cmath>
#include <initializer_list>
#include <string>
#include <vector>

#include "common/input/byte_source.h"
#include "common/input/pointer_trie.h"
#include "common/input/ndjson_reader.h"
#include "common/input/record_reader.h"
#include "tests/input/reader_test_util.h"

namespace fanfold {
namespace {

struct Outcome {
  ReadStats stats;
  std::vector<std::string> rows;
};

Outcome Run(std::initializer_list<const char*> refs, const std::string& input) {
  FieldTable fields;
  for (const char* r : refs) fields.InternField(r);
  auto reader = NdjsonReader::Create(fields);
  REQUIRE(reader.ok());
  auto src = MemorySource(input);
  Collect sink(fields.size());
  Outcome out;
  REQUIRE((*reader)->Read(*src, sink, &out.stats).ok());
  out.rows = sink.rows;
  return out;
}

}  // namespace

// Integers are exact within [-2^63, 2^64); wider integers are their nearest
// double and 1e400 is infinity, not a malformed line. Python: json.loads gives
// these ints exactly and float('inf') for 1e400 (its decoder applies float()).
TEST_CASE("numbers beyond 64 bits and beyond the double range") {
  Outcome o = Run({"/n", "/s", "/a/1"},
                  R"({"n":9007199254740993,"s":"x"})" "\n"      // Python: 2**53 + 1
                  R"({"n":18446744073709551615})" "\n"          // Python: 2**64 - 1
                  R"({"n":-9223372036854775808})" "\n"          // Python: -2**63
                  R"({"n":123456789012345678901234567890,"s":"y","a":[0,1e400]})" "\n"
                  R"({"a":[-9223372036854775809,-1e400],"n":1e400})" "\n"
                  R"({"n":-9223372036854775809,"n":1})" "\n"    // duplicate: the first wins here too
                  R"({"n":01,"s":1e400})" "\n");                 // malformed, also on the second pass
  CHECK(o.stats.records == 6);
  CHECK(o.stats.malformed == 1);
  REQUIRE(o.rows.size() == 6);
  CHECK(o.rows[0] == "9007199254740993|'x'|-");
  CHECK(o.rows[1] == "18446744073709551615|-|-");
  CHECK(o.rows[2] == "-9223372036854775808|-|-");
  // Python: '%.17g' % float(123456789012345678901234567890) == '1.2345678901234568e+29'
  CHECK(o.rows[3] == "1.2345678901234568e+29|'y'|inf");
  CHECK(o.rows[4] == "inf|-|-inf");
  // Python: '%.17g' % float(-9223372036854775809) == '-9.2233720368547758e+18'
  CHECK(o.rows[5] == "-9.2233720368547758e+18|-|-");
  REQUIRE(o.stats.samples.size() == 1);
  CHECK(o.stats.samples[0].line == 7);
  // RFC 8259 section 6: a number has no leading zero; the reason is worded from the line itself.
  CHECK(o.stats.samples[0].reason ==
        "column 6: found a number with a leading zero; expected 0 or a number starting with 1-9");
}

// Intent: the walk's verdict and values do not depend on the byte after the
// line (the reader's lines end at a line break or padding, which the walk
// may use as a sentinel; any other byte takes the bounds-checked walk).
TEST_CASE("NdjsonLineParser::Parse whatever follows the line") {
  FieldTable fields;
  fields.InternField("/a");
  fields.InternField("/b/1");
  Result<std::vector<PointerNode>> trie = BuildPointerTrie(fields);
  REQUIRE(trie.ok());
  const std::vector<std::string> lines = {R"({"a":1,"b":[2,"x"]})", R"({"a":1)", R"({"a":[1,2})", R"({})", R"({"a")",
                                          R"({"a":)", R"({"a":"s"} )", R"({"a":1,"b":[0,tru]})", R"([1])", R"({"a":nul})"};
  uint64_t generation = 0;
  for (const std::string& line : lines) {
    CAPTURE(line);
    std::string outcome[2];
    int k = 0;
    for (char after : {'\n', '}'}) {
      std::string buf = line + after + std::string(64, ' ');
      std::vector<Value> slots(fields.size());
      NdjsonLineParser parser;
      const LineVerdict v = parser.Parse(buf.data(), line.size(), buf.size(), &*trie, ++generation, slots.data());
      outcome[k++] = std::to_string(static_cast<int>(v)) + ":" + Show(slots[0]) + "|" + Show(slots[1]);
    }
    CHECK(outcome[0] == outcome[1]);
  }
}

}  // namespace fanfold
