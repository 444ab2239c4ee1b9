// Tests for CsvReader / ReadRecords on CSV and TSV (common/input/csv/csv_reader.h).
// External references: the examples of RFC 4180 section 2, and Python 3's
// csv module (run through popen on generated files) as an independent parser.
#include "common/input/csv/csv_reader.h"

#include <doctest/doctest.h>
#include <stdlib.h>

#include <cstdio>
#include <filesystem>
#include <fstream>
#include <random>
#include <string>
#include <vector>

#include "common/input/record_reader.h"
#include "tests/input/reader_test_util.h"

namespace fanfold {
namespace {


FieldTable Fields(const std::vector<std::string>& names) {
  FieldTable t;
  for (const std::string& n : names) t.InternField(n);
  return t;
}

struct Outcome {
  Status status;
  ReadStats stats;
  std::vector<std::string> rows;
};

Outcome Run(const FieldTable& fields, const std::string& input, char sep = ',', size_t chunk = kDefaultChunkBytes,
            size_t max_record = ChunkOptions{}.max_record_bytes) {
  CsvReader reader(fields, sep, ChunkOptions{chunk, max_record});
  auto src = MemorySource(input);
  Collect sink(fields.size());
  Outcome out;
  out.status = reader.Read(*src, sink, &out.stats);
  out.rows = sink.rows;
  return out;
}

std::string Samples(const Outcome& o) {
  std::string s;
  for (const MalformedSample& m : o.stats.samples) s += std::to_string(m.line) + ":" + m.reason + ";";
  return s;
}

std::string Hex(const std::string& s) {
  static const char kHex[] = "0123456789abcdef";
  std::string h;
  for (unsigned char c : s) {
    h += kHex[c >> 4];
    h += kHex[c & 15];
  }
  return h;
}

}  // namespace

// The examples of RFC 4180 section 2 (rules 1, 5, 6 and 7), behind a header row.
TEST_CASE("RFC 4180 section 2 examples") {
  const std::string input =
      "h1,h2,h3\r\n"
      "aaa,bbb,ccc\r\n"
      "zzz,yyy,xxx\r\n"
      "\"aaa\",\"bbb\",\"ccc\"\r\n"
      "\"aaa\",\"b\r\nbb\",\"ccc\"\r\n"
      "zzz,yyy,xxx\r\n"
      "\"aaa\",\"b\"\"bb\",\"ccc\"";  // rule 2: the last record may lack a line break
  Outcome o = Run(Fields({"h1", "h2", "h3"}), input);
  REQUIRE(o.status.ok());
  CHECK(o.rows == std::vector<std::string>{"'aaa'|'bbb'|'ccc'", "'zzz'|'yyy'|'xxx'", "'aaa'|'bbb'|'ccc'",
                                           "'aaa'|'b\r\nbb'|'ccc'", "'zzz'|'yyy'|'xxx'", "'aaa'|'b\"bb'|'ccc'"});
  CHECK(o.stats.malformed == 0);
  CHECK(o.stats.raw_bytes == input.size());
}

// Separators and quotes inside quoted fields; fields are picked by name in any order.
TEST_CASE("quoted separators, escapes, empty cells") {
  const std::string input =
      "id,note,qty\n"
      "1,\"a,b\",3\n"
      "2,\"say \"\"hi\"\", ok\",\n"
      "3,,\"\"\n"
      "4, ,x\"y\n";
  Outcome o = Run(Fields({"note", "qty", "id"}), input);
  REQUIRE(o.status.ok());
  // An empty cell, quoted or not, is Missing; a space is a value; a stray quote inside an unquoted field is data.
  CHECK(o.rows == std::vector<std::string>{"'a,b'|'3'|'1'", "'say \"hi\", ok'|-|'2'", "-|-|'3'", "' '|'x\"y'|'4'"});
}

// Intent: a reader of some columns only, past the 64th too, gets exactly
// those cells whatever the unread ones hold (RFC 4180 section 2: fields by
// position), with empty cells Missing and wrong field counts malformed.
TEST_CASE("some columns read, beyond the 64th too") {
  std::string header, row1, row2;
  for (int c = 0; c < 70; ++c) {
    header += (c ? "," : "") + std::string("c") + std::to_string(c);
    row1 += (c ? "," : "") + std::to_string(c);
    row2 += (c ? "," : "") + (c % 2 ? std::string() : "v" + std::to_string(c));
  }
  const std::string input = header + "\n" + row1 + "\n" + row2 + "\r\n" + row1 + ",extra\n" + "1,2\n" + row1;
  Outcome o = Run(Fields({"c3", "c66", "c0", "c69", "c64"}), input);
  REQUIRE(o.status.ok());
  CHECK(o.rows == std::vector<std::string>{"'3'|'66'|'0'|'69'|'64'", "-|'v66'|'v0'|-|'v64'", "'3'|'66'|'0'|'69'|'64'"});
  CHECK(o.stats.malformed == 2);
  CHECK(Samples(o) == "4:expected 70 fields, found 71;5:expected 70 fields, found 2;");
}

// Wrong field counts and bad quotes are malformed, with the line each record starts on.
TEST_CASE("malformed records and their lines") {
  const std::string input =
      "a,b,c\n"               // 1 header
      "1,2,3\n"               // 2 ok
      "1,2\n"                 // 3 too few
      "\"x\ny\",2,3\n"        // 4-5 ok, spans two lines
      "1,2,3,4\n"             // 6 too many
      "\n"                    // 7 blank
      "\"ab\"c,2,3\n"         // 8 text after a closing quote
      "9,8,7\n"               // 9 ok
      "1,\"open,2,3\n"        // 10.. unclosed quote swallows the rest
      "4,5,6\n";
  Outcome o = Run(Fields({"a", "c"}), input);
  REQUIRE(o.status.ok());
  CHECK(o.rows == std::vector<std::string>{"'1'|'3'", "'x\ny'|'3'", "'9'|'7'"});
  CHECK(o.stats.records == 3);
  CHECK(o.stats.malformed == 4);
  CHECK(Samples(o) ==
        "3:expected 3 fields, found 2;6:expected 3 fields, found 4;8:text after a closing quote;"
        "10:unclosed quote at end of input;");
  // An unclosed quote early in a big input stops at the record limit instead of buffering everything.
  std::string big = "a,b\n1,\"never closed\n" + std::string(50'000, 'z');
  Outcome limited = Run(Fields({"a"}), big, ',', 1000, 20'000);
  CHECK(limited.status.code() == Status::Code::kCorrupt);
  CHECK(limited.status.message() == "line 2: a record is longer than the limit of 20000 bytes");
}

// The loan of record_reader.h: every record comes inside a loan, the
// strings it lent are unchanged until the loan ends (checked there, after
// the reader has gone on cutting records), every loan ends before Read
// returns, and an EndLoan returning false stops the reader. Inputs with
// escapes in read cells, a line break inside quotes and CRLF, at chunk
// sizes that make the reader refill (move its data) often.
TEST_CASE("strings lent until the loan ends") {
  const std::string input =
      "a,b,c\r\n"
      "1,\"x\"\"y\",3\r\n"
      "plain,cell,here\n"
      "\"multi\nline\",\"q\",\"\"\"\"\"\"\n"
      "\n"
      "bad,row\n"
      "4,5,6\n"
      "\"7\",\"8,9\",10";
  FieldTable f = Fields({"c", "a", "b"});
  class Borrower : public RecordSink {
   public:
    explicit Borrower(size_t stop_at_loan) : stop_at_loan_(stop_at_loan) {}
    void LendStrings() override {
      CHECK(!in_loan);
      in_loan = true;
    }
    bool OnRecord(Value* slots) override {
      CHECK(in_loan);
      for (int i = 0; i < 3; ++i) {
        lent_.push_back(slots[i].str);
        copies_.emplace_back(slots[i].str);
      }
      std::string row;
      for (int i = 0; i < 3; ++i) row += (i ? "|" : "") + Show(slots[i]);
      rows.push_back(row);
      return true;
    }
    bool EndLoan() override {
      CHECK(in_loan);
      in_loan = false;
      for (size_t i = 0; i < lent_.size(); ++i) CHECK(std::string(lent_[i]) == copies_[i]);
      lent_.clear();
      copies_.clear();
      return ++loans != stop_at_loan_;
    }
    bool in_loan = false;
    size_t loans = 0;
    std::vector<std::string> rows;

   private:
    size_t stop_at_loan_;
    std::vector<std::string_view> lent_;
    std::vector<std::string> copies_;
  };
  const std::vector<std::string> expected = {"'3'|'1'|'x\"y'", "'here'|'plain'|'cell'", "'\"\"'|'multi\nline'|'q'",
                                             "'6'|'4'|'5'", "'10'|'7'|'8,9'"};
  for (size_t chunk : {size_t{1}, size_t{7}, size_t{64}, kDefaultChunkBytes}) {
    CAPTURE(chunk);
    CsvReader reader(f, ',', ChunkOptions{chunk});
    auto src = MemorySource(input);
    Borrower sink(0);
    ReadStats st;
    REQUIRE(reader.Read(*src, sink, &st).ok());
    CHECK(!sink.in_loan);
    CHECK(sink.rows == expected);
    CHECK(st.malformed == 1);
  }
  // A sink that stops at its first EndLoan gets the records of one chunk only.
  CsvReader reader(f, ',', ChunkOptions{64});
  auto src = MemorySource(input);
  Borrower sink(1);
  REQUIRE(reader.Read(*src, sink, nullptr).ok());
  CHECK(sink.loans == 1);
  CHECK(!sink.in_loan);
  CHECK(sink.rows.size() < expected.size());
}

// A field that is not a header column is an error listing the header.
TEST_CASE("missing header column") {
  Outcome o = Run(Fields({"a", "nope"}), "a,b,c\n1,2,3\n");
  CHECK(o.status.code() == Status::Code::kInvalidArgument);
  CHECK(o.status.message() == "column 'nope' is not in the header of this CSV input; header has: a, b, c");
  Outcome t = Run(Fields({"x"}), "a\tb\n", '\t');
  CHECK(t.status.message() == "column 'x' is not in the header of this TSV input; header has: a, b");
}

// TSV: tab separates, commas are data, quoting works as in CSV.
TEST_CASE("TSV") {
  const std::string input = "k\tv\r\nx,y\t\"tab\there\"\r\n\"q\"\"\"\t\r\n";
  Outcome o = Run(Fields({"k", "v"}), input, '\t');
  REQUIRE(o.status.ok());
  CHECK(o.rows == std::vector<std::string>{"'x,y'|'tab\there'", "'q\"'|-"});
}

// Header edge cases: a UTF-8 byte order mark, a header only, empty input, a malformed header.
TEST_CASE("header edge cases") {
  Outcome bom = Run(Fields({"a"}), "\xEF\xBB\xBF" "a,b\n1,2\n", ',', 1);
  REQUIRE(bom.status.ok());
  CHECK(bom.rows == std::vector<std::string>{"'1'"});
  Outcome only = Run(Fields({"b"}), "a,b\n");
  CHECK(only.status.ok());
  CHECK(only.stats.records == 0);
  Outcome empty = Run(Fields({"a"}), "");
  CHECK(empty.status.ok());
  CHECK(empty.stats.records == 0);
  Outcome bad = Run(Fields({"a"}), "\"a\"x,b\n1,2\n");
  CHECK(bad.status.code() == Status::Code::kCorrupt);
  // A lone CR inside an unquoted field is data, not a line end.
  Outcome cr = Run(Fields({"a", "b"}), "a,b\nx\ry,z\n");
  CHECK(cr.rows == std::vector<std::string>{"'x\ry'|'z'"});
}

// The sink can stop early; ReadRecords dispatches CSV and TSV here.
TEST_CASE("ReadRecords dispatch and early stop") {
  FieldTable f = Fields({"a"});
  auto src = MemorySource("a\n1\n2\n3\n");
  Collect sink(1, 2);
  ReadStats st;
  REQUIRE(ReadRecords(RecordFormat::kCsv, *src, f, sink, &st).ok());
  CHECK(sink.rows == std::vector<std::string>{"'1'", "'2'"});
  auto tsv = MemorySource("a\tb\n1\t2\n");
  Collect sink2(1);
  REQUIRE(ReadRecords(RecordFormat::kTsv, *tsv, f, sink2, &st).ok());
  CHECK(sink2.rows == std::vector<std::string>{"'1'"});
}

// Generated CSV and TSV with every quoting hazard parse exactly as Python 3's csv module parses them,
// and the result does not depend on where chunk boundaries fall.
TEST_CASE("agrees with Python's csv module on generated files") {
  const int kCols = 5;
  std::vector<std::string> names;
  for (int c = 0; c < kCols; ++c) names.push_back("col" + std::to_string(c));
  FieldTable f = Fields(names);
  std::mt19937 rng(21);
  // Three mixes: every hazard often; mostly plain records (no quote in the
  // whole record), an occasional hazard; and quoted cells with separators
  // and "" escapes but no line breaks (what the reader's fast cut takes).
  const std::vector<std::string> hazards = {"a", "Zq", " ", ",", "\t", "\"", "\n", "\r\n", "\xC3\xA9", "12.5", "x y"};
  const std::vector<std::string> quoted = {"a", "Zq", " ", ",", "\t", "\"", "\"\"", "\r", "\xC3\xA9", "12.5", "x y"};
  const std::vector<std::string> plain = {"a", "Zq", " ", "\xC3\xA9", "12.5", "x y", "L-0123", "2026-03-01T00:00:00Z",
                                          "a longer cell of thirty bytes..", ",", "\""};
  for (const auto& [sep, mix] : {std::pair{',', 0}, std::pair{'\t', 0}, std::pair{',', 1}, std::pair{'\t', 1},
                                 std::pair{',', 2}, std::pair{'\t', 2}}) {
    CAPTURE(int(sep));
    CAPTURE(mix);
    const std::vector<std::string>& pieces = mix == 0 ? hazards : mix == 1 ? plain : quoted;
    // In the plain mix the last two pieces (separator, quote) are drawn 1 time in 60.
    auto piece = [&]() -> const std::string& {
      if (mix != 1) return pieces[rng() % pieces.size()];
      return rng() % 60 == 0 ? pieces[pieces.size() - 1 - rng() % 2] : pieces[rng() % (pieces.size() - 2)];
    };
    std::string input;
    for (int c = 0; c < kCols; ++c) input += (c ? std::string(1, sep) : "") + names[c];
    input += "\r\n";
    for (int r = 0; r < 400; ++r) {
      for (int c = 0; c < kCols; ++c) {
        if (c) input += sep;
        std::string cell;
        int n = static_cast<int>(rng() % 4);
        for (int i = 0; i < n; ++i) cell += piece();
        bool needs_quotes = cell.find_first_of(std::string("\"\r\n") + sep) != std::string::npos;
        if (needs_quotes || rng() % (mix == 0 ? 5 : mix == 1 ? 200 : 3) == 0) {
          std::string q = "\"";
          for (char ch : cell) q += ch == '"' ? std::string("\"\"") : std::string(1, ch);
          input += q + "\"";
        } else {
          input += cell;
        }
      }
      input += (rng() % 2) ? "\n" : "\r\n";
    }
    char tmpl[] = "/tmp/fanfold-csv-XXXXXX";
    std::string dir = mkdtemp(tmpl);
    std::ofstream(dir + "/in.csv", std::ios::binary) << input;
    std::ofstream(dir + "/judge.py") << R"(import csv, sys
with open(sys.argv[1], newline='', encoding='utf-8') as f:
    rows = list(csv.reader(f, delimiter=sys.argv[2]))
for row in rows[1:]:
    if row:
        print(' '.join('-' if c == '' else 'h' + c.encode('utf-8').hex() for c in row))
)";
    std::string cmd = "python3 " + dir + "/judge.py " + dir + "/in.csv " + (sep == ',' ? "," : "'\t'");
    FILE* p = popen(cmd.c_str(), "r");
    REQUIRE(p != nullptr);
    std::vector<std::string> expected;
    char line[1 << 14];
    while (std::fgets(line, sizeof line, p) != nullptr) {
      std::string s(line);
      s.pop_back();
      expected.push_back(s);
    }
    int rc = pclose(p);
    std::filesystem::remove_all(dir);
    REQUIRE(rc == 0);
    REQUIRE(expected.size() == 400);
    for (size_t chunk : {size_t{1}, size_t{3}, size_t{16}, size_t{1000}, kDefaultChunkBytes}) {
      CAPTURE(chunk);
      CsvReader reader(f, sep, ChunkOptions{chunk});
      auto src = MemorySource(input);
      struct HexRows : RecordSink {
        bool OnRecord(Value* slots) override {
          std::string row;
          for (int c = 0; c < kCols; ++c) {
            if (c) row += ' ';
            row += slots[c].is_missing() ? "-" : "h" + Hex(std::string(slots[c].str));
          }
          rows.push_back(row);
          return true;
        }
        std::vector<std::string> rows;
      } sink;
      ReadStats st;
      REQUIRE(reader.Read(*src, sink, &st).ok());
      CHECK(st.malformed == 0);
      CHECK(sink.rows == expected);
      // Only columns 1 and 3 read: the cells of the others (escapes
      // included) are cut but not kept; the read ones equal Python's.
      FieldTable some = Fields({names[3], names[1]});
      CsvReader some_reader(some, sep, ChunkOptions{chunk});
      auto some_src = MemorySource(input);
      struct TwoHexRows : RecordSink {
        bool OnRecord(Value* slots) override {
          rows.push_back((slots[0].is_missing() ? "-" : "h" + Hex(std::string(slots[0].str))) + " " +
                         (slots[1].is_missing() ? "-" : "h" + Hex(std::string(slots[1].str))));
          return true;
        }
        std::vector<std::string> rows;
      } some_sink;
      ReadStats some_st;
      REQUIRE(some_reader.Read(*some_src, some_sink, &some_st).ok());
      CHECK(some_st.malformed == 0);
      REQUIRE(some_sink.rows.size() == expected.size());
      for (size_t r = 0; r < expected.size(); ++r) {
        std::vector<std::string> cells;
        for (size_t at = 0, next; at <= expected[r].size(); at = next + 1) {
          next = expected[r].find(' ', at);
          if (next == std::string::npos) next = expected[r].size();
          cells.push_back(expected[r].substr(at, next - at));
        }
        REQUIRE(cells.size() == kCols);
        CHECK(some_sink.rows[r] == cells[3] + " " + cells[1]);
      }
    }
  }
}

}  // namespace fanfold
