// Regression tests for bugs the fuzzers found in job-file parsing
// (tests/fuzz/fuzz_job_spec.cc).
#include <doctest/doctest.h>

#include <string>

#include "common/job/job_spec.h"

using namespace fanfold;

// Intent: a number too large for a double is a bad job file (an error
// naming the file), not an escaping nlohmann::json out_of_range exception
// (406) that used to terminate the program: ParseJobSpec's second parse,
// which finds the error position, caught only json::parse_error.
TEST_CASE("regression: job file with a number that overflows a double") {
  for (const char* text : {R"({"about": 1e999})",
                           R"({"inputs":{"files":["a.ndjson"]},"measures":[{"name":"n","fn":"count"}],"about":-1e400})",
                           // the fuzzer's input, as it found it
                           "{\"inputs\":{\"files\":55555555555555555555555555555e5555555555e5555555555555555555555555"
                           "55555\"\xcc\"count\"}]}\n"}) {
    Result<JobSpec> r = ParseJobSpec(text, "jobs/x.json");
    REQUIRE_FALSE(r.ok());
    CHECK(r.status().code() == Status::Code::kInvalidArgument);
    CHECK(r.status().message().rfind("jobs/x.json: not valid JSON", 0) == 0);
  }
  Result<JobSpec> r = ParseJobSpec(R"({"about": 1e999})", "jobs/x.json");
  REQUIRE_FALSE(r.ok());
  // The message says where and what was wrong, in our words.
  CHECK(r.status().message() ==
        "jobs/x.json: not valid JSON at line 1, column 11: found the number 1e999, too large for a double; expected "
        "a number of magnitude below 1.8e308");
}
