// Tests for JobSpec parsing: accepted shapes, and that every rejection names
// the JSON Pointer (RFC 6901) of the bad value and what was expected.
#include <doctest/doctest.h>

#include "common/job/job_spec.h"

using namespace fanfold;

namespace {
const char* kMinimal = R"({"inputs": {"files": ["a.ndjson"]}, "measures": [{"name": "n", "fn": "count"}]})";

std::string ErrorOf(const std::string& text) {
  Result<JobSpec> r = ParseJobSpec(text, "job.json");
  REQUIRE(!r.ok());
  CHECK(r.status().code() == Status::Code::kInvalidArgument);
  return r.status().message();
}
}  // namespace

TEST_CASE("a minimal job parses with defaults") {
  // Intent: the smallest valid job gets table output to stdout and no filter.
  Result<JobSpec> r = ParseJobSpec(kMinimal, "dir/job.json");
  REQUIRE(r.ok());
  CHECK(r->base_dir == "dir");
  CHECK(r->files == std::vector<std::string>{"a.ndjson"});
  CHECK(r->reductions[0].measures.size() == 1);
  CHECK(r->reductions[0].measures[0].config.kind == MeasureKind::kCount);
  CHECK(r->reductions[0].emit.format == OutputFormat::kTable);
  CHECK(r->keep.empty());
  CHECK(!r->format.has_value());
}

TEST_CASE("every measure option is read") {
  // Intent: options reach MeasureConfig for the fn that takes them.
  Result<JobSpec> r = ParseJobSpec(R"({"inputs": {"files": ["a.csv"], "format": "csv", "bad_record_limit": 0.1},
    "measures": [{"name": "q", "fn": "ddsketch", "of": "{x}", "at": [0.5, 0.99], "alpha": 0.02},
                 {"name": "d", "fn": "hyperloglog", "of": "{x}", "precision": 10},
                 {"name": "t", "fn": "top", "of": "{x}", "k": 3, "limit": 50},
                 {"name": "f", "fn": "at_lowest", "of": "{x}", "by": "{t}"}],
    "emit": {"format": "csv", "order": [{"by": "d", "desc": true}], "limit": 5}})",
                                   "job.json");
  REQUIRE(r.ok());
  CHECK(*r->format == RecordFormat::kCsv);
  CHECK(*r->bad_record_limit == 0.1);
  CHECK(r->reductions[0].measures[0].config.probabilities == std::vector<double>{0.5, 0.99});
  CHECK(r->reductions[0].measures[0].config.alpha == 0.02);
  CHECK(r->reductions[0].measures[1].config.precision == 10);
  CHECK(r->reductions[0].measures[2].config.k == 3);
  CHECK(r->reductions[0].measures[2].config.limit == 50);
  CHECK(r->reductions[0].measures[3].by == "{t}");
  CHECK(r->reductions[0].emit.order[0].descending);
  CHECK(*r->reductions[0].emit.limit == 5);
}

TEST_CASE("errors name the JSON Pointer, what was found and what was expected") {
  // Intent: golden messages for the common mistakes.
  CHECK(ErrorOf(R"({"inputs": {"files": ["a"]}, "measures": [{"name": "n", "fn": "count"}], "colour": 1})") ==
        "job.json: /colour: found unknown key \"colour\"; expected one of: about, derive, emit, group, inputs, "
        "keep, measures, memory_cap, reductions, rows, tables");
  CHECK(ErrorOf(R"({"inputs": {"files": "a"}, "measures": [{"name": "n", "fn": "count"}]})") ==
        "job.json: /inputs/files: found \"a\" (a string); expected an array of strings (wrap it in [ ])");
  std::string fn = ErrorOf(R"({"inputs": {"files": ["a"]}, "measures": [{"name": "n", "fn": "count"},
                                {"name": "m", "fn": "avg", "of": "{/x}"}]})");
  CHECK(fn.find("/measures/1/fn: found unknown measure \"avg\"; expected one of: ") != std::string::npos);
  CHECK(ErrorOf(R"({"inputs": {"files": ["a"]}, "measures": [{"name": "s", "fn": "sum"}]})") ==
        "job.json: /measures/0: found no \"of\"; expected \"of\": the expression fn \"sum\" reads");
  CHECK(ErrorOf(R"({"inputs": {"files": ["a"]}, "measures": [{"name": "n", "fn": "count", "of": "{/x}"}]})") ==
        "job.json: /measures/0/of: found \"of\"; expected no \"of\" for fn \"count\"");
  CHECK(ErrorOf(R"({"inputs": {"files": ["a"]}, "measures": [{"name": "q", "fn": "quantile", "of": "{/x}",
                   "at": [0.5, 1.5]}]})") ==
        "job.json: /measures/0/at/1: found 1.5 (a number); expected a number in [0, 1]");
  CHECK(ErrorOf(R"({"inputs": {"files": ["a"]}, "measures": [{"name": "d", "fn": "hyperloglog", "of": "{/x}",
                   "precision": 30}]})") ==
        "job.json: /measures/0/precision: found 30 (an integer); expected an integer in [4, 18]");
  CHECK(ErrorOf(R"({"measures": []})") == "job.json: (top level): found no \"inputs\"; expected \"inputs\": {\"files\": [...]}");
  CHECK(ErrorOf(R"({"inputs": {"files": ["a"]}, "measures": [], "emit": {"format": "xml"}})") ==
        "job.json: /measures: found an array; expected a non-empty array of measures");
  CHECK(ErrorOf(R"({"inputs": {"files": ["a"]}, "measures": [{"name": "n", "fn": "count"}],
                   "emit": {"order": [{"by": "n", "desc": "yes"}]}})") ==
        "job.json: /emit/order/0/desc: found \"yes\" (a string); expected true or false");
}

TEST_CASE("JSON syntax errors give line and column") {
  // Intent: a broken file points at where the parser stopped.
  std::string m = ErrorOf("{\n  \"inputs\": {\"files\": [\"a\"]},\n  \"measures\": [,]\n}");
  CHECK(m.rfind("job.json: not valid JSON at line 3, column", 0) == 0);
}

TEST_CASE("keys that need escaping are escaped in pointers") {
  // Intent: RFC 6901 §3 escaping of '/' and '~' in reported locations.
  std::string m = ErrorOf(R"({"inputs": {"files": ["a"], "a/b~": 1}, "measures": [{"name": "n", "fn": "count"}]})");
  CHECK(m.find("/inputs/a~1b~0: found unknown key") != std::string::npos);
}

TEST_CASE("misspelt keys, measures and formats get the nearest names") {
  // Intent: at every level of the job file, an unknown key names the likely
  // intended one (nearest by edit distance), keeping the message's shape.
  CHECK(ErrorOf(R"({"input": {"files": ["a"]}, "measures": [{"name": "n", "fn": "count"}]})") ==
        "job.json: /input: found unknown key \"input\" (did you mean \"inputs\"?); expected one of: about, derive, "
        "emit, group, inputs, keep, measures, memory_cap, reductions, rows, tables");
  CHECK(ErrorOf(R"({"inputs": {"file": ["a"]}, "measures": [{"name": "n", "fn": "count"}]})")
            .find("/inputs/file: found unknown key \"file\" (did you mean \"files\"?)") != std::string::npos);
  CHECK(ErrorOf(R"({"inputs": {"files": ["a"]}, "measures": [{"name": "n", "fn": "coutn"}]})")
            .find("/measures/0/fn: found unknown measure \"coutn\" (did you mean \"count\"?); expected one of: ") !=
        std::string::npos);
  CHECK(ErrorOf(R"({"inputs": {"files": ["a"]}, "measures": [{"name": "q", "fn": "quantile", "of": "{/x}",
                   "att": [0.5]}]})")
            .find("/measures/0/att: found unknown key \"att\" (did you mean \"at\"?)") != std::string::npos);
  CHECK(ErrorOf(R"({"inputs": {"files": ["a"]}, "measures": [{"name": "n", "fn": "count"}],
                   "emit": {"order": [{"by": "n", "dsc": true}]}})")
            .find("/emit/order/0/dsc: found unknown key \"dsc\" (did you mean \"desc\"?)") != std::string::npos);
  CHECK(ErrorOf(
            R"({"inputs": {"files": ["a"]}, "measures": [{"name": "n", "fn": "count"}], "emit": {"format": "cvs"}})") ==
        "job.json: /emit/format: found unknown format \"cvs\" (did you mean \"csv\"?); expected \"csv\", \"json\", "
        "\"ndjson\" or \"table\"");
  // Nothing near: the message has no suggestion at all.
  CHECK(ErrorOf(R"({"inputs": {"files": ["a"]}, "measures": [{"name": "n", "fn": "count"}], "zzzzzz": 1})")
            .find("did you mean") == std::string::npos);
}
