// Tests of the NDJSON reader's two ValueChecks (common/input/ndjson_line_parser.h):
// generated lines with known kinds of errors, and thousands of mutated lines. External reference:
// Python 3's json module, run through popen. With kEveryValue a line must be
// a record exactly when json.loads gives a dict, with the same values (the
// first of duplicate keys, via object_pairs_hook). With kReadValues the
// by-design difference is stated in Python: the line is first rewritten with
// every token that starts like a number or true/false/null (t, f, n, -,
// a digit) and that no pointer reads replaced by 0, a token running to the
// next space, comma, colon, bracket, brace or quote; json.loads then judges.
#include <stdlib.h>

#include <cstdio>
#include <filesystem>
#include <initializer_list>
#include <fstream>
#include <random>
#include <string>
#include <vector>

#include <doctest/doctest.h>

#include "common/input/ndjson_reader.h"
#include "tests/base/text_edit_test_util.h"
#include "tests/input/ndjson_test_util.h"
#include "tests/input/reader_test_util.h"

namespace fanfold {
namespace {

const char kJudge[] = R"(import json, sys
READ = ('"ts"', '"lamp"', '"power_w"', '"fault"')
DELIM = ' \t\r\n,:[]{}"'
def unread_to_zero(line):
    out, i, depth, expect_key, key, seen = [], 0, 0, False, None, set()
    while i < len(line):
        c = line[i]
        if c == '"':
            j = i + 1
            while j < len(line) and line[j] != '"':
                j += 2 if line[j] == '\\' else 1
            text = line[i:j + 1]
            if depth == 1 and expect_key:
                key = text
            elif depth == 1 and key is not None:
                seen.add(key)
            out.append(text); i = j + 1; continue
        if c in '{[':
            if depth == 1 and key is not None: seen.add(key)
            depth += 1; expect_key = c == '{'
        elif c in '}]':
            depth -= 1
        elif c == ',':
            if depth == 1: expect_key = True
        elif c == ':':
            if depth == 1: expect_key = False
        elif c not in ' \t\r\n':
            j = i
            while j < len(line) and line[j] not in DELIM:
                j += 1
            tok = line[i:j]
            read = depth == 1 and not expect_key and key in READ and key not in seen
            if depth == 1 and key is not None and not expect_key: seen.add(key)
            out.append(tok if read or tok[0] not in '-0123456789tfn' else '0')
            i = j; continue
        out.append(c); i += 1
    return ''.join(out)
def show(x):
    if x is None: return 'null'
    if isinstance(x, bool): return 'true' if x else 'false'
    if isinstance(x, int) and -2**63 <= x < 2**64: return str(x)
    if isinstance(x, (int, float)): return '%.17g' % float(x)
    if isinstance(x, str): return "'" + x + "'"
    return '{}'
mode = sys.argv[2]
for line in open(sys.argv[1], encoding='utf-8', errors='surrogateescape', newline='\n'):
    line = line.rstrip('\n')
    try:
        line.encode('utf-8')
        if mode == 'read':
            line = unread_to_zero(line)
        pairs = json.loads(line, object_pairs_hook=lambda p: p)
    except (ValueError, UnicodeEncodeError):
        print('bad'); continue
    if not isinstance(pairs, list):
        print('bad'); continue
    first = {}
    for k, v in pairs:
        first.setdefault(k, v)
    row = '|'.join(show(first[k]) if k in first else '-' for k in ('ts', 'lamp', 'power_w', 'fault'))
    print('ok ' + row.replace('\n', '<LF>'))
)";



}  // namespace

// Intent: both modes agree with Python on every mutated line as stated at
// the top; the read-values mode is never stricter than every-value; and the
// mutations do reach the by-design difference (else the test proves little).
TEST_CASE("ValueChecks on mutated lines against Python's json module") {
  const std::vector<std::string> base = {
      R"({"ts":"2026-03-01T00:00:01.317Z","lamp":"L-70804","event":"heartbeat","latency_ms":19.65,"fw":{"version":"4.1.3","channel":"stable"},"readings":[9.6,65],"fault":null})",
      R"({"ts":"2026-03-01T00:00:03Z","lamp":"L-1\u00e9","power_w":49.2,"fw":{"ok":true,"n":-1e3},"readings":[],"fault":"F\"7"})",
      R"({"lamp":"L-2","power_w":-0.5e-2,"readings":[[1,2],{"a":false}],"x":"a\\b","fault":{"code":12}})",
      R"( {"power_w":18446744073709551615,"ts":1772323200,"z":[true,false,null,0.0,-0]} )"};
  const std::string alphabet = "{}[],:\"\\ 0123456789.-+eEtrufalsnx#\x01\xC3\xA9\xFF";
  std::mt19937 rng(2026);
  std::vector<std::string> lines;
  for (int i = 0; i < 6000; ++i) {
    std::string l = base[rng() % base.size()];
    const int edits = 1 + static_cast<int>(rng() % 2);
    for (int e = 0; e < edits; ++e) {
      const size_t at = rng() % (l.size() + 1);
      const char c = alphabet[rng() % alphabet.size()];
      EditOneByte(&l, at, c, rng());
    }
    lines.push_back(l);
  }
  std::string input;
  for (const std::string& l : lines) input += l + "\n";
  char tmpl[] = "/tmp/fanfold-ndjson-checks-XXXXXX";
  const std::string dir = mkdtemp(tmpl);
  std::ofstream(dir + "/in.ndjson", std::ios::binary) << input;
  std::ofstream(dir + "/judge.py") << kJudge;

  FieldTable fields;
  for (const char* f : {"/ts", "/lamp", "/power_w", "/fault"}) fields.InternField(f);
  std::vector<std::string> verdicts[2];  // per line: "bad" or the row; [0] read values, [1] every value
  for (int every = 0; every < 2; ++every) {
    CAPTURE(every);
    FILE* p = popen(("python3 " + dir + "/judge.py " + dir + "/in.ndjson " + (every ? "every" : "read")).c_str(), "r");
    REQUIRE(p != nullptr);
    std::vector<std::string> expected;
    char buf[8192];
    while (std::fgets(buf, sizeof buf, p) != nullptr) {
      std::string s(buf);
      s.pop_back();
      expected.push_back(s == "bad" ? s : s.substr(3));
    }
    REQUIRE(pclose(p) == 0);
    REQUIRE(expected.size() == lines.size());
    auto reader =
        NdjsonReader::Create(fields, ChunkOptions{}, every ? ValueChecks::kEveryValue : ValueChecks::kReadValues);
    REQUIRE(reader.ok());
    int disagreements = 0;
    for (size_t i = 0; i < lines.size(); ++i) {
      auto src = MemorySource(lines[i] + "\n");
      Collect sink(fields.size());
      ReadStats st;
      REQUIRE((*reader)->Read(*src, sink, &st).ok());
      const bool blank = lines[i].find_first_not_of(" \t\r") == std::string::npos;
      std::string got = sink.rows.empty() ? (blank && st.malformed == 0 ? "blank" : "bad") : sink.rows[0];
      for (size_t at = got.find('\n'); at != std::string::npos; at = got.find('\n', at)) got.replace(at, 1, "<LF>");
      if (got == "blank") {
        verdicts[every].push_back(expected[i]);  // Python calls it bad; the reader skips it uncounted
        continue;
      }
      verdicts[every].push_back(got);
      if (got != expected[i] && ++disagreements <= 5) {
        FAIL_CHECK("line " << i << ": " << lines[i] << "\n  reader: " << got << "\n  Python: " << expected[i]);
      }
    }
    CHECK(disagreements == 0);
  }
  std::filesystem::remove_all(dir);
  int differ = 0;
  for (size_t i = 0; i < lines.size(); ++i) {
    if (verdicts[1][i] != "bad") CHECK(verdicts[0][i] == verdicts[1][i]);  // never stricter, same values
    if (verdicts[1][i] == "bad" && verdicts[0][i] != "bad") ++differ;
  }
  MESSAGE(differ << " of " << lines.size() << " mutated lines are records only with read-value checks");
  CHECK(differ > 20);
}

// Python 3's json module judges each generated line: with every value checked, a line is a record iff
// json.loads gives a dict, and the values of /svc and /n must agree too. With only read values checked
// (the default), the judge first replaces each number or true/false/null token that no pointer reads
// (outside strings, not the first /svc or /n member) by 0: the by-design difference, stated in Python.
TEST_CASE("validity and values agree with Python's json module") {
  std::mt19937 rng(12);
  const std::vector<std::string> good = {
      R"({"svc":"a","n":1})", R"({"n":-2.5e3,"svc":"b\u00e9","x":[1,{"y":null}]})", R"( {"svc":"c"} )",
      R"({"svc":"d","n":123456789012,"t":true,"f":false})", R"({})", R"({"svc":"e\"q","n":0.1})",
      // Integers around 2^53, 2^63 and 2^64, beyond 64 bits, and beyond the double range.
      R"({"svc":"g","n":9007199254740993})", R"({"n":18446744073709551615})", R"({"n":-9223372036854775808})",
      R"({"n":123456789012345678901234567890,"svc":"h"})", R"({"n":-9223372036854775809,"x":[1,{"y":"z"}]})",
      R"({"svc":"i\u00e9","n":1e400})", R"({"n":-1e400,"svc":"j"})", R"({"n":1e-400})",
      R"({"x":[18446744073709551616],"n":-0})", R"({"svc":"k","n":12345678901234567890123.5e-5})"};
  const std::vector<std::string> bad = {
      R"({"svc":"a",)", R"({"svc":"a" "n":1})", R"({"svc":nul})", R"({"n":1.})", R"({"n":-})", R"({"n":.5})",
      R"({"svc":"\x"})", R"(["svc"])", R"("svc")", R"({"svc":"a"}})", R"({"a":[1 2]})", R"({"a":{"b":1]})",
      R"({"n":1e})", R"(null)", R"({"n":+1})", "{\"svc\":\"tab\there\"}",
      // Malformed lines that also hold a number the DOM parser refuses.
      R"({"n":123456789012345678901234567890,})", R"({"n":1e400)", R"([1e400])", R"({"n":1e400} {"n":1})",
      R"({"n":123456789012345678901234567890,"z":[1,,2]})", R"({"n":1e400,"svc":"\x"})", R"({"n":01})",
      R"({"n":1e400x})", R"({"n":99999999999999999999999,"t":tru})", R"({"n":1e400,"u":nul})",
      R"({"n":-1e400.5})", R"({"n":1e400,"svc":"a" "k":1})"};
  std::string input;
  for (int i = 0; i < 2000; ++i) {
    input += (rng() % 3 == 0) ? bad[rng() % bad.size()] : good[rng() % good.size()];
    input += "\n";
  }
  char tmpl[] = "/tmp/fanfold-ndjson-XXXXXX";
  std::string dir = mkdtemp(tmpl);
  std::ofstream(dir + "/in.ndjson", std::ios::binary) << input;
  std::ofstream(dir + "/judge.py") << R"(import json, sys
def unread_to_zero(line):
    out, i, depth, key, seen, expect_key = [], 0, 0, None, set(), False
    while i < len(line):
        c = line[i]
        if c == '"':
            j = i + 1
            while j < len(line) and line[j] != '"':
                j += 2 if line[j] == '\\' else 1
            text = line[i:j + 1]
            if depth == 1 and expect_key:
                key = text
            out.append(text); i = j + 1; continue
        if c in '{[':
            depth += 1; expect_key = c == '{'
        elif c in '}]':
            depth -= 1
        elif c == ',':
            expect_key = depth == 1 or expect_key
        elif c == ':':
            expect_key = False
        elif c in '-0123456789tfn':
            j = i
            while j < len(line) and (line[j].isalnum() or line[j] in '+-.'):
                j += 1
            read = depth == 1 and key in ('"svc"', '"n"') and key not in seen
            out.append(line[i:j] if read else '0')
            if depth == 1 and key is not None: seen.add(key)
            i = j; continue
        if depth == 1 and c in ',:' and key is not None and c == ',': seen.add(key)
        out.append(c); i += 1
    return ''.join(out)
lenient = sys.argv[2] == 'read'
for line in open(sys.argv[1], encoding='utf-8', newline='\n'):
    if not line.strip():
        continue
    if lenient:
        line = unread_to_zero(line)
    try:
        v = json.loads(line)
    except ValueError:
        print('bad'); continue
    if not isinstance(v, dict):
        print('bad'); continue
    def show(x):
        if x is None: return 'null'
        if isinstance(x, bool): return 'true' if x else 'false'
        if isinstance(x, int) and -2**63 <= x < 2**64: return str(x)
        if isinstance(x, (int, float)): return '%.17g' % float(x)
        if isinstance(x, str): return "'" + x + "'"
        return '{}'
    print('ok ' + '|'.join(show(v[k]) if k in v else '-' for k in ('svc', 'n')))
)";
  uint64_t bad_by_mode[2] = {0, 0};
  for (ValueChecks checks : {ValueChecks::kEveryValue, ValueChecks::kReadValues}) {
    const bool every = checks == ValueChecks::kEveryValue;
    CAPTURE(every);
    FILE* p = popen(("PYTHONIOENCODING=utf-8 python3 " + dir + "/judge.py " + dir + "/in.ndjson " +
                     (every ? "every" : "read")).c_str(), "r");
    REQUIRE(p != nullptr);
    std::vector<std::string> expected_rows;
    uint64_t expected_bad = 0;
    char line[4096];
    while (std::fgets(line, sizeof line, p) != nullptr) {
      std::string s(line);
      s.pop_back();
      if (s == "bad") {
        ++expected_bad;
      } else {
        expected_rows.push_back(s.substr(3));
      }
    }
    int rc = pclose(p);
    REQUIRE(rc == 0);
    REQUIRE(expected_rows.size() + expected_bad == 2000);
    Outcome o = Run(Fields({"/svc", "/n"}), input, 1000, ChunkOptions{}.max_record_bytes, checks);
    REQUIRE(o.status.ok());
    CHECK(o.stats.malformed == expected_bad);
    CHECK(o.rows == expected_rows);
    bad_by_mode[every ? 1 : 0] = expected_bad;
  }
  std::filesystem::remove_all(dir);
  // The bad list holds lines whose only error is an unread 'tru' or 'nul': the modes must differ.
  CHECK(bad_by_mode[0] < bad_by_mode[1]);
}

}  // namespace fanfold
