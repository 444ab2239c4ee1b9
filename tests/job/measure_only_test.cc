// Tests for a measure's own filter, "only" (MeasureSpec::only): how the job
// file gives it, how it is compiled (located errors, the derived fields it
// needs), and that it is part of the plan fingerprint. Its effect on results
// is checked against sqlite3 in tests/e2e/test_conditional_measures.py.
#include <doctest/doctest.h>

#include <string>

#include "common/job/plan.h"

using namespace fanfold;

namespace {

Result<std::unique_ptr<Plan>> CompileJob(const std::string& measures, const std::string& derive = "[]") {
  Result<JobSpec> spec = ParseJobSpec(
      R"({"inputs": {"files": ["a"]}, "derive": )" + derive + R"(, "measures": [)" + measures + "]}", "job.json");
  if (!spec.ok()) return spec.status();
  return CompilePlan(std::move(spec.value()), RecordFormat::kNdjson);
}

std::string ErrorOf(const std::string& measures) {
  Result<std::unique_ptr<Plan>> plan = CompileJob(measures);
  return plan.ok() ? "ok" : plan.status().message();
}

}  // namespace

// Intent: "only" is a string expression on any measure, compiled with the
// plan; its mistakes name the job file, the key's JSON Pointer and the column.
TEST_CASE("only is compiled as the measure's filter") {
  Result<std::unique_ptr<Plan>> plan =
      CompileJob(R"({"name": "f", "fn": "count", "only": "{/event} == 'fault'"},
                    {"name": "w", "fn": "sum", "of": "{/power_w}", "only": "{/power_w} > 50"},
                    {"name": "n", "fn": "count"})");
  REQUIRE_MESSAGE(plan.ok(), plan.status().message());
  CHECK((*plan)->reductions[0].measures[0].only.has_value());
  CHECK((*plan)->reductions[0].measures[1].only->text() == "{/power_w} > 50");
  CHECK_FALSE((*plan)->reductions[0].measures[2].only.has_value());
  CHECK(ErrorOf(R"({"name": "f", "fn": "count", "only": "{/event} = 'fault'"})") ==
        "job.json: /measures/0/only: column 10: '='; expected '==' to compare for equality");
  CHECK(ErrorOf(R"({"name": "f", "fn": "count", "only": true})") ==
        "job.json: /measures/0/only: found true (a boolean); expected a string");
  CHECK(ErrorOf(R"({"name": "f", "fn": "count", "only": ""})") ==
        "job.json: /measures/0/only: found an empty string; expected a non-empty string");
  CHECK(ErrorOf(R"({"name": "f", "fn": "count", "onyl": "{/a}"})") ==
        "job.json: /measures/0/onyl: found unknown key \"onyl\" (did you mean \"only\"?); expected one of: "
        "alpha, at, by, edges, fn, from, k, limit, name, of, only, precision, shown_digits, to, width");
}

// Intent: derived fields that only an "only" filter reads are still
// evaluated for kept records (else the filter would read missing values).
TEST_CASE("derived fields an only filter reads are evaluated") {
  Result<std::unique_ptr<Plan>> plan =
      CompileJob(R"({"name": "f", "fn": "count", "only": "hot"})",
                 R"([{"name": "w", "expr": "{/power_w} * 1"}, {"name": "hot", "expr": "w > 50"},
                     {"name": "unused", "expr": "{/y}"}])");
  REQUIRE_MESSAGE(plan.ok(), plan.status().message());
  CHECK((*plan)->derive_after_keep == std::vector<size_t>{0, 1});
}
