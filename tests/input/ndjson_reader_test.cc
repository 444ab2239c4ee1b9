// Tests for NdjsonReader / ReadRecords on NDJSON (common/input/ndjson_reader.h).
// External references: the example document and pointers of RFC 6901
// section 5; the comparisons with Python's json module are in
// ndjson_checks_test.cc.
#include "common/input/ndjson_reader.h"

#include <doctest/doctest.h>
#include <stdlib.h>
#include <unistd.h>

#include <algorithm>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <random>
#include <string>
#include <vector>

#include "common/input/chunk_source.h"
#include "common/input/pointer_trie.h"
#include "common/input/record_reader.h"
#include "tests/input/ndjson_test_util.h"
#include "tests/input/reader_test_util.h"

namespace fanfold {
namespace {




std::string SampleLines(const Outcome& o) {
  std::string s;
  for (const MalformedSample& m : o.stats.samples) s += std::to_string(m.line) + " ";
  return s;
}

}  // namespace

// The example of RFC 6901 section 5: every pointer there selects the value it lists.
TEST_CASE("RFC 6901 section 5 example pointers") {
  const std::string doc =
      R"({"foo": ["bar", "baz"], "": 0, "a/b": 1, "c%d": 2, "e^f": 3, "g|h": 4, "i\\j": 5, "k\"l": 6, " ": 7, "m~n": 8})"
      "\n";
  FieldTable f = Fields({"/foo", "/foo/0", "/", "/a~1b", "/c%d", "/e^f", "/g|h", "/i\\j", "/k\"l", "/ ", "/m~0n"});
  Outcome o = Run(f, doc);
  REQUIRE(o.status.ok());
  REQUIRE(o.rows.size() == 1);
  CHECK(o.rows[0] == "{}|'bar'|0|1|2|3|4|5|6|7|8");
}

// Nested members, array elements by decimal index, and the JSON kinds of values.
TEST_CASE("nested pointers, array indices and value kinds") {
  FieldTable f = Fields({"/user/id", "/user/geo/city", "/tags/1", "/tags/01", "/tags/-", "/m/1", "/n", "/b", "/o",
                         "/absent/x", "/user/geo", "/s", "/deep/0/k/1"});
  const std::string doc =
      R"({"user":{"id":42,"geo":{"city":"Orvik","zip":null}},"tags":["x","y","z"],"m":{"1":"one"},)"
      R"("n":null,"b":false,"o":[],"s":"a\"b\u00e9\n","deep":[{"k":[5,{"q":1}]}]})"
      "\n";
  Outcome o = Run(f, doc);
  REQUIRE(o.status.ok());
  REQUIRE(o.rows.size() == 1);
  // "/tags/01" and "/tags/-" name no element (RFC 6901 section 4); "/m/1" is a member name on an object.
  CHECK(o.rows[0] == "42|'Orvik'|'y'|-|-|'one'|null|false|{}|-|{}|'a\"b\xC3\xA9\n'|{}");
}

// Escaped keys in the document match pointers by their unescaped text.
TEST_CASE("keys with JSON escapes") {
  FieldTable f = Fields({"/a~1b", "/t\"q", "/~0home"});
  Outcome o = Run(f, R"({"a\u002Fb": 1, "t\"q": 2, "\u007ehome": 3})" "\n");
  REQUIRE(o.status.ok());
  REQUIRE(o.rows.size() == 1);
  CHECK(o.rows[0] == "1|2|3");
}

// With duplicate keys the first occurrence wins, also for whole subtrees.
TEST_CASE("duplicate keys: first wins") {
  FieldTable f = Fields({"/a", "/u/id", "/u/x"});
  Outcome o = Run(f, R"({"a":1,"u":{"id":7},"a":2,"u":{"id":8,"x":9}})" "\n"
                    R"({"a":1,"a":2,"u":{"x":3}})" "\n"
                    R"({"u":{"id":7},"u":{"id":8,"x":9},"a":0})" "\n");
  REQUIRE(o.rows.size() == 3);
  CHECK(o.rows[0] == "1|7|-");
  CHECK(o.rows[1] == "1|-|3");
  CHECK(o.rows[2] == "0|7|-");
}

// Intent: a key finds its pointer however many siblings it has and however
// alike their keys are (the trie's child table, and its scan where two keys
// share length and first 8 bytes), and near-miss keys find none. Reference:
// the generator's own records, evaluated as RFC 6901 section 4 says (each
// wanted key's value is its number; decoys and unknown keys are not read).
TEST_CASE("many sibling keys, alike keys and near misses") {
  // Under /t every key is distinct in length or first 8 bytes; under /s two
  // keys share both (the scan).
  const std::vector<std::string> t_keys = {"",           "a",          "ts",         "ts_ms",      "lamp",
                                           "event",      "power_w",    "abcdefgh",   "abcdefgh1",  "latency_ms",
                                           "abcdefghijklmnop", "abcdefghijklmnopq",
                                           "a key with spaces and more than thirty bytes",  "\\u00e9t\\u00e9"};
  const std::vector<std::string> s_keys = {"abcdefgh1", "abcdefgh2", "x"};
  const std::vector<std::string> decoys = {"b",          "tz",           "ts_mz",  "abcdefgi",  "abcdefgh3",
                                           "latency_mu", "abcdefghijklmnoq", "abcdefghijklmnopr", "lamps", "abcdefghijklmnopQ"};
  FieldTable f;
  std::vector<std::string> refs;
  for (const std::string& k : t_keys) refs.push_back("/t/" + (k == "\\u00e9t\\u00e9" ? std::string("\xC3\xA9t\xC3\xA9") : k));
  for (const std::string& k : s_keys) refs.push_back("/s/" + k);
  for (const std::string& r : refs) f.InternField(r);
  {  // /t gets a child table, /s (two keys alike in length and first 8 bytes) the scan
    Result<std::vector<PointerNode>> trie = BuildPointerTrie(f);
    REQUIRE(trie.ok());
    for (uint32_t c : (*trie)[0].children) CHECK((*trie)[c].child_table.empty() == ((*trie)[c].token == "s"));
  }
  std::mt19937 rng(7);
  std::string input;
  std::vector<std::string> expected;
  for (int line = 0; line < 200; ++line) {
    // Each wanted key present with probability 3/4, value its number plus
    // 100 * line; decoys always present with value -1; shuffled.
    std::vector<std::pair<std::string, std::string>> t_members, s_members;
    std::string row;
    for (size_t i = 0; i < refs.size(); ++i) {
      const bool in_t = i < t_keys.size();
      const std::string& key = in_t ? t_keys[i] : s_keys[i - t_keys.size()];
      const bool present = rng() % 4 != 0;
      const std::string value = std::to_string(100 * line + static_cast<int>(i));
      if (present) (in_t ? t_members : s_members).push_back({key, value});
      row += (i ? "|" : "") + (present ? value : std::string("-"));
    }
    for (const std::string& d : decoys) {
      t_members.push_back({d, "-1"});
      s_members.push_back({d, "-1"});
    }
    std::shuffle(t_members.begin(), t_members.end(), rng);
    std::shuffle(s_members.begin(), s_members.end(), rng);
    auto object = [](const std::vector<std::pair<std::string, std::string>>& members) {
      std::string o = "{";
      for (size_t m = 0; m < members.size(); ++m) o += (m ? "," : "") + ("\"" + members[m].first + "\":") + members[m].second;
      return o + "}";
    };
    input += "{\"s\":" + object(s_members) + ",\"t\":" + object(t_members) + "}\n";
    expected.push_back(row);
  }
  Outcome o = Run(f, input);
  CHECK(o.stats.malformed == 0);
  REQUIRE(o.rows.size() == expected.size());
  for (size_t i = 0; i < expected.size(); ++i) {
    CAPTURE(i);
    CHECK(o.rows[i] == expected[i]);
  }
}

// A pointer to a value and to something inside it both get filled.
TEST_CASE("pointer and its prefix together") {
  FieldTable f = Fields({"/a", "/a/b", "/c/0", "/c"});
  Outcome o = Run(f, "{\"a\":{\"b\":true},\"c\":[3]}\n{\"a\":5,\"c\":{\"0\":4}}\n");
  REQUIRE(o.rows.size() == 2);
  CHECK(o.rows[0] == "{}|true|3|{}");
  CHECK(o.rows[1] == "5|-|4|{}");
}

// Each kind of malformed line is counted once, with the line it is on; blank lines count for neither.
TEST_CASE("malformed lines counted exactly with line numbers") {
  FieldTable f = Fields({"/k"});
  const std::vector<std::string> lines = {
      R"({"k":1})",              // 1 ok
      R"({"k":2)",               // 2 truncated object
      "",                        // 3 blank
      R"({"k":"open)",           // 4 unclosed string
      "   \t ",                  // 5 whitespace only
      R"([1,2])",                // 6 not an object
      R"({"k":3,})",             // 7 trailing comma
      R"({"k":tru})",            // 8 bad literal
      R"({"k":4})",              // 9 ok
      R"({"k":5} {"k":6})",      // 10 two values on a line
      R"({"z":[1,,2],"k":7})",   // 11 error inside a value no pointer needs
      R"({"z":"\q","k":8})",     // 12 bad escape in an unused string
      R"(42)",                   // 13 scalar
      R"({'k':9})",              // 14 single quotes
      "{\"k\":\"\xff\"}",        // 15 invalid UTF-8
      R"({"k":01})",             // 16 leading zero
      R"({"k":10})",             // 17 ok
  };
  std::string input;
  for (const std::string& l : lines) input += l + "\n";
  // The same counts with either ValueChecks: every error above is structural, in a string, or in a value read.
  for (ValueChecks checks : {ValueChecks::kReadValues, ValueChecks::kEveryValue}) {
    CAPTURE(checks == ValueChecks::kEveryValue);
    Outcome o = Run(f, input, kDefaultChunkBytes, ChunkOptions{}.max_record_bytes, checks);
    REQUIRE(o.status.ok());
    CHECK(o.stats.records == 3);
    CHECK(o.stats.malformed == 12);
    CHECK(o.rows == std::vector<std::string>{"1", "4", "10"});
    REQUIRE(o.stats.samples.size() == ReadStats::kMaxSamples);
    CHECK(SampleLines(o) == "2 4 6 7 8 ");
    // Our words, not simdjson's, with the column (Python's json.loads: "Unterminated
    // string starting at: line 1 column 6").
    CHECK(o.stats.samples[0].reason ==
          "column 7: expected ',' or '}' after the value of \"k\", found the end of the text (the object opened at "
          "column 1 is not closed)");
    CHECK(o.stats.samples[1].reason ==
          "column 11: expected '\"' to close the string that starts at column 6, found the end of the text");
    CHECK(o.stats.samples[2].reason == "the line is not a JSON object");
    CHECK(o.stats.raw_bytes == input.size());
  }
}

// CRLF line ends, a last line without a newline, and CR-only "blank" lines.
TEST_CASE("CRLF and the last line") {
  FieldTable f = Fields({"/k"});
  Outcome o = Run(f, "{\"k\":1}\r\n\r\n{\"k\":2\r\n{\"k\":3}");
  REQUIRE(o.status.ok());
  CHECK(o.rows == std::vector<std::string>{"1", "3"});
  REQUIRE(o.stats.samples.size() == 1);
  CHECK(o.stats.samples[0].line == 3);
}

// A UTF-8 byte-order mark opening the shard is skipped (RFC 8259 section 8.1
// lets a parser ignore one; Python's json.loads on text decoded with
// 'utf-8-sig' reads the same first record); one anywhere else is malformed.
TEST_CASE("byte-order mark at the start of a shard") {
  FieldTable f = Fields({"/k"});
  const std::string bom = "\xEF\xBB\xBF";
  Outcome o = Run(f, bom + "{\"k\":1}\n{\"k\":2}\n");
  REQUIRE(o.status.ok());
  CHECK(o.rows == std::vector<std::string>{"1", "2"});
  CHECK(o.stats.malformed == 0);
  CHECK(o.stats.raw_bytes == bom.size() + 16);  // the mark's bytes are still bytes read
  // Every chunk size, down to one byte: the mark may arrive split.
  for (size_t chunk : {1, 2, 3, 4, 7}) CHECK(Run(f, bom + "{\"k\":1}\n", chunk).rows == std::vector<std::string>{"1"});
  // A mark alone, or a mark opening a later line, is no record.
  CHECK(Run(f, bom).rows.empty());
  Outcome later = Run(f, "{\"k\":1}\n" + bom + "{\"k\":2}\n");
  CHECK(later.rows == std::vector<std::string>{"1"});
  CHECK(later.stats.malformed == 1);
}

// A cut file reads as the whole file: the mark is skipped in the chunk at
// offset 0 only, and a later chunk starting with a mark keeps it malformed.
TEST_CASE("byte-order mark and chunks of a cut file") {
  FieldTable f = Fields({"/k"});
  const std::string bom = "\xEF\xBB\xBF";
  const std::string text = bom + "{\"k\":1}\n" + bom + "{\"k\":2}\n{\"k\":3}\n";
  char tmpl[] = "/tmp/fanfold-bom-test-XXXXXX";
  const int fd = mkstemp(tmpl);
  REQUIRE(fd >= 0);
  REQUIRE(::write(fd, text.data(), text.size()) == static_cast<ssize_t>(text.size()));
  ::close(fd);
  for (uint64_t cut : {1, 5, 11, 12, 13, 20}) {
    std::vector<std::string> rows;
    uint64_t malformed = 0;
    for (uint64_t off = 0; off < text.size(); off += cut) {
      auto src = OpenChunkSource(tmpl, off, std::min<uint64_t>(cut, text.size() - off));
      REQUIRE(src.ok());
      auto reader = NdjsonReader::Create(f, ChunkOptions{});
      REQUIRE(reader.ok());
      Collect sink(f.size());
      ReadStats st;
      REQUIRE((*reader)->Read(**src, sink, &st).ok());
      rows.insert(rows.end(), sink.rows.begin(), sink.rows.end());
      malformed += st.malformed;
    }
    CHECK(rows == std::vector<std::string>{"1", "3"});
    CHECK(malformed == 1);
  }
  ::unlink(tmpl);
}

// Records cut at every possible chunk boundary give the same rows, counts and lines as one big chunk.
TEST_CASE("records split across chunk boundaries") {
  FieldTable f = Fields({"/id", "/s", "/arr/2"});
  std::mt19937 rng(11);
  std::string input;
  for (int i = 0; i < 300; ++i) {
    switch (rng() % 5) {
      case 0: input += "{\"id\":" + std::to_string(i) + ",\"s\":\"" + std::string(rng() % 40, 'x') + "\"}\n"; break;
      case 1: input += "{\"arr\":[1,2,{\"id\":0},\"" + std::to_string(i) + "\"],\"id\":" + std::to_string(i) + "}\r\n"; break;
      case 2: input += "{\"id\":" + std::to_string(i) + ",\"bad\":[}\n"; break;
      case 3: input += "\n  \n"; break;
      default: input += "{\"s\":\"line " + std::to_string(i) + "\",\"id\":-" + std::to_string(i) + ".5e1}\n"; break;
    }
  }
  Outcome whole = Run(f, input);
  REQUIRE(whole.status.ok());
  REQUIRE(whole.stats.records > 100);
  REQUIRE(whole.stats.malformed > 20);
  for (size_t chunk : {1, 2, 3, 5, 17, 64, 255, 4096}) {
    CAPTURE(chunk);
    Outcome o = Run(f, input, chunk);
    REQUIRE(o.status.ok());
    CHECK(o.rows == whole.rows);
    CHECK(o.stats.malformed == whole.stats.malformed);
    CHECK(SampleLines(o) == SampleLines(whole));
    CHECK(o.stats.raw_bytes == input.size());
  }
}

// One record far longer than the chunk grows the buffer and still parses.
TEST_CASE("record longer than the chunk") {
  FieldTable f = Fields({"/big", "/n"});
  std::string big(300'000, 'q');
  std::string input = "{\"n\":1}\n{\"big\":\"" + big + "\",\"n\":2}\n{\"n\":3}\n";
  Outcome o = Run(f, input, 4096);
  REQUIRE(o.status.ok());
  REQUIRE(o.rows.size() == 3);
  CHECK(o.rows[1] == "'" + big + "'|2");
  CHECK(o.rows[2] == "-|3");
  // Past the record limit the read stops with an error naming the line, instead of growing without bound.
  Outcome limited = Run(f, input, 4096, 100'000);
  CHECK(limited.status.code() == Status::Code::kCorrupt);
  CHECK(limited.status.message() == "line 2: a record is longer than the limit of 100000 bytes");
  CHECK(limited.rows.size() == 1);
}

// A corrupt compressed stream is reported as the source's error, unchanged, after the records before it.
TEST_CASE("source errors pass through") {
  class Failing : public ByteSource {
   public:
    Result<size_t> Read(char* dst, size_t cap) override {
      if (done_) return Status::Corrupt("'x.zst': corrupt zstd data at compressed byte 9: bad");
      done_ = true;
      std::string s = "{\"k\":1}\n{\"k\":";
      std::memcpy(dst, s.data(), s.size());
      return s.size();
    }
    uint64_t compressed_bytes() const override { return 0; }

   private:
    bool done_ = false;
  } src;
  FieldTable f = Fields({"/k"});
  auto reader = NdjsonReader::Create(f);
  REQUIRE(reader.ok());
  Collect sink(1);
  ReadStats st;
  Status s = (*reader)->Read(src, sink, &st);
  CHECK(s.message() == "'x.zst': corrupt zstd data at compressed byte 9: bad");
  CHECK(sink.rows == std::vector<std::string>{"1"});
  CHECK(st.raw_bytes == 13);
}

// Raw fields must be JSON Pointers; "" (the whole record) and bad '~' escapes are refused.
TEST_CASE("bad pointers are refused at construction") {
  auto r = NdjsonReader::Create(Fields({"user.id"}));
  REQUIRE(!r.ok());
  CHECK(r.status().code() == Status::Code::kInvalidArgument);
  CHECK(r.status().message() == "NDJSON fields are JSON Pointers and start with '/': got 'user.id'");
  CHECK(NdjsonReader::Create(Fields({""})).status().code() == Status::Code::kInvalidArgument);
  CHECK(!NdjsonReader::Create(Fields({"/a~2"})).ok());  // RFC 6901 section 3: only ~0 and ~1
  CHECK(!NdjsonReader::Create(Fields({"/a~"})).ok());
  // Derived slots are not pointers and are left alone.
  FieldTable t = Fields({"/a"});
  t.AddDerived("doubled");
  CHECK(NdjsonReader::Create(t).ok());
}

// The sink can stop the read early; ReadRecords dispatches NDJSON to this reader.
TEST_CASE("sink stops early via ReadRecords") {
  FieldTable f = Fields({"/k"});
  auto src = MemorySource("{\"k\":1}\n{\"k\":2}\n{\"k\":3}\n");
  Collect sink(1, 2);
  ReadStats st;
  REQUIRE(ReadRecords(RecordFormat::kNdjson, *src, f, sink, &st).ok());
  CHECK(sink.rows == std::vector<std::string>{"1", "2"});
  CHECK(st.records == 2);
}

}  // namespace fanfold
