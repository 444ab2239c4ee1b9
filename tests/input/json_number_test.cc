// Tests for ParseJsonNumber and IsJsonNumber (common/input/json_number.h).
// External references: RFC 8259 section 6's grammar and Python's json.loads
// and float() (named beside each check).
#include "common/input/json_number.h"

#include <doctest/doctest.h>
#include <stdlib.h>
#include <unistd.h>

#include <cmath>
#include <cstdio>
#include <cstring>
#include <fstream>
#include <random>
#include <string>
#include <vector>

namespace fanfold {

// The number grammar of RFC 8259 section 6 and the values of ParseJsonNumber,
// judged by Python's json.loads (named beside each).
TEST_CASE("ParseJsonNumber") {
  Value v;
  for (const char* good : {"0", "-0", "12", "-0.5", "1e5", "1E+5", "2.5e-3", "123456789012345678901234567890"})
    CHECK(IsJsonNumber(good));  // number tokens by RFC 8259 section 6's grammar
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
  for (const char* bad : {"", "-", "01", "1.", ".5", "+1", "1e", "1e+", "0x10", "1 ", "--1", "1.5.2", "inf", "NaN",
                          "-01", "00.5", "-.5", "1..2", "1.5.", ".", "-."}) {
    INFO(bad);
    CHECK_FALSE(ParseJsonNumber(bad, &v));  // not a number token in RFC 8259 section 6's grammar
    CHECK_FALSE(IsJsonNumber(bad));
  }
}

// Every double ParseJsonNumber makes equals Python's float() of the same
// token bit for bit (float.hex), and every integer token within
// [-2^63, 2^64) is that exact integer (Python's int()), over 4000 random
// tokens shaped like log values: short decimals and integers (the one-pass
// fast path and Clinger's), long ones, 19- to 21-digit integers, exponents
// near the fast path's edge (10^22) and far beyond it.
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
    if (i % 4 == 3) {  // an integer of 1 to 21 digits: exact up to 2^64, then a double
      std::string ip = digits(1 + static_cast<int>(rng() % 21));
      if (ip.size() > 1 && ip[0] == '0') ip[0] = '1';
      tokens.push_back(t + ip);
      continue;
    }
    const int int_len = 1 + static_cast<int>(rng() % 12);
    std::string ip = digits(int_len);
    if (ip.size() > 1 && ip[0] == '0') ip[0] = '1';  // no leading zero (RFC 8259 section 6)
    t += ip;
    if (rng() % 3 != 0) t += "." + digits(1 + static_cast<int>(rng() % 20));
    if (rng() % 3 == 0) t += "e" + std::to_string(static_cast<int>(rng() % 70) - 35);
    tokens.push_back(t);
  }
  // The edges of the exact range and of the one-pass path (18 digits).
  for (const char* edge : {"999999999999999999", "-999999999999999999", "1000000000000000000", "9223372036854775807",
                           "9223372036854775808", "-9223372036854775808", "-9223372036854775809",
                           "9999999999999999999", "18446744073709551615", "18446744073709551616", "999999999999999.9",
                           "0.0000000000000001", "-0.0", "0.1", "123456789012345.6"})
    tokens.push_back(edge);
  char tmpl[] = "/tmp/fanfold-numbers-XXXXXX";
  const int fd = mkstemp(tmpl);
  REQUIRE(fd >= 0);
  ::close(fd);
  {
    std::ofstream f(tmpl);
    for (const std::string& t : tokens) f << t << "\n";
  }
  // Python prints the exact integer of an integer token within [-2^63, 2^64)
  // (int()), and float().hex() of every other token.
  FILE* p = popen((std::string("python3 -c \"import sys\nfor l in open(sys.argv[1]):\n l = l.strip()\n "
                               "n = int(l) if l.lstrip('-').isdigit() else None\n "
                               "print(n if n is not None and -2**63 <= n < 2**64 else float(l).hex())\" ") +
                   tmpl)
                      .c_str(), "r");
  REQUIRE(p != nullptr);
  char line[128];
  size_t i = 0;
  int mismatches = 0;
  while (std::fgets(line, sizeof line, p) != nullptr && i < tokens.size()) {
    Value v;
    REQUIRE(ParseJsonNumber(tokens[i], &v));
    std::string want(line);
    want.pop_back();  // the line break
    if (want.find('x') == std::string::npos) {  // an exact integer
      std::string got_digits = v.is_integer() ? std::to_string(v.rep == NumberRep::kUint64
                                                                   ? static_cast<unsigned long long>(v.bits)
                                                                   : 0ULL)
                                              : "not an integer";
      if (v.is_integer() && v.rep == NumberRep::kInt64) got_digits = std::to_string(static_cast<int64_t>(v.bits));
      if (got_digits != want && ++mismatches <= 5) FAIL_CHECK(tokens[i] << ": got " << got_digits << ", Python " << want);
      ++i;
      continue;
    }
    const double expected = std::strtod(line, nullptr);  // C99 hex float text, exact
    const double got = v.number;
    if (v.is_integer() || std::memcmp(&got, &expected, sizeof got) != 0) {
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
