// Tests for NdjsonLineParser (common/input/ndjson_line_parser.h): numbers
// beyond 64 bits through the reader, and ParseJsonNumber on its own.
// External reference: Python's json module and float() (named beside each
// check).
#include "common/input/ndjson_line_parser.h"

#include <doctest/doctest.h>

#include <stdlib.h>
#include <unistd.h>

#include <cmath>
#include <cstdio>
#include <cstring>
#include <fstream>
#include <initializer_list>
#include <random>
#include <string>
#include <vector>

#include "common/input/byte_source.h"
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

// The number grammar of RFC 8259 section 6 and the values of the second pass,
// judged by Python's json.loads (named beside each).
TEST_CASE("ParseJsonNumber") {
  Value v;
  REQUIRE(ParseJsonNumber("-0", &v));
  CHECK((v.is_integer() && v.Wide() == 0));  // Python: json.loads('-0') == 0
  REQUIRE(ParseJsonNumber("18446744073709551616", &v));
  CHECK((!v.is_integer() && v.number == 18446744073709551616.0));  // Python: float(2**64)
  REQUIRE(ParseJsonNumber("-1e400", &v));
  CHECK(v.number == -HUGE_VAL);  // Python: json.loads('-1e400') == float('-inf')
  REQUIRE(ParseJsonNumber("1e-400", &v));
  CHECK(v.number == 0);  // Python: json.loads('1e-400') == 0.0
  REQUIRE(ParseJsonNumber("0.000000000000000000000000001e-300", &v));
  CHECK(v.number == 0);  // Python: json.loads('0.000000000000000000000000001e-300') == 0.0
  REQUIRE(ParseJsonNumber("1000000000000000000000000000000e280", &v));
  CHECK(v.number == HUGE_VAL);  // Python: json.loads('1000000000000000000000000000000e280') == float('inf')
  REQUIRE(ParseJsonNumber("0.0000000000000000000001e320", &v));
  CHECK(v.number == 1e298);  // Python: json.loads('0.0000000000000000000001e320') == 1e298
  for (const char* bad : {"", "-", "01", "1.", ".5", "+1", "1e", "1e+", "0x10", "1 ", "--1", "1.5.2", "inf", "NaN"}) {
    INFO(bad);
    CHECK_FALSE(ParseJsonNumber(bad, &v));  // not a number token in RFC 8259 section 6's grammar
  }
}

// Every double ParseJsonNumber makes equals Python's float() of the same
// token bit for bit (float.hex), over 4000 random tokens shaped like log
// values: short decimals (Clinger's fast path), long ones, exponents near
// the fast path's edge (10^22) and far beyond it.
TEST_CASE("ParseJsonNumber agrees with Python's float() bit for bit") {
  std::mt19937_64 rng(23);
  std::vector<std::string> tokens;
  auto digits = [&](int n) {
    std::string d;
    for (int i = 0; i < n; ++i) d += static_cast<char>('0' + rng() % 10);
    return d;
  };
  for (int i = 0; i < 4000; ++i) {
    std::string t = rng() % 4 == 0 ? "-" : "";
    const int int_len = 1 + static_cast<int>(rng() % 12);
    std::string ip = digits(int_len);
    if (ip.size() > 1 && ip[0] == '0') ip[0] = '1';  // no leading zero (RFC 8259 section 6)
    t += ip;
    if (rng() % 3 != 0) t += "." + digits(1 + static_cast<int>(rng() % 20));
    if (rng() % 3 == 0) t += "e" + std::to_string(static_cast<int>(rng() % 70) - 35);
    tokens.push_back(t);
  }
  char tmpl[] = "/tmp/fanfold-numbers-XXXXXX";
  const int fd = mkstemp(tmpl);
  REQUIRE(fd >= 0);
  ::close(fd);
  {
    std::ofstream f(tmpl);
    for (const std::string& t : tokens) f << t << "\n";
  }
  FILE* p = popen((std::string("python3 -c \"import sys\nfor l in open(sys.argv[1]): print(float(l).hex())\" ") + tmpl)
                      .c_str(), "r");
  REQUIRE(p != nullptr);
  char line[128];
  size_t i = 0;
  int mismatches = 0;
  while (std::fgets(line, sizeof line, p) != nullptr && i < tokens.size()) {
    Value v;
    REQUIRE(ParseJsonNumber(tokens[i], &v));
    const double expected = std::strtod(line, nullptr);  // C99 hex float text, exact
    const double got = v.number;
    if (!v.is_integer() && std::memcmp(&got, &expected, sizeof got) != 0) {  // integers: exact, tested above
      if (++mismatches <= 5) FAIL_CHECK(tokens[i] << ": got " << got << ", Python " << line);
    }
    ++i;
  }
  CHECK(pclose(p) == 0);
  ::unlink(tmpl);
  CHECK(i == tokens.size());
  CHECK(mismatches == 0);
}

}  // namespace fanfold
