// Tests for the end-of-run warnings: absent fields and a filter that kept
// nothing, from merged totals.
#include "coordinator/run/run_warnings.h"

#include <string>
#include <vector>

#include <doctest/doctest.h>

#include "common/job/job_spec.h"

using namespace fanfold;

namespace {

std::unique_ptr<Plan> MakePlan(const char* job, RecordFormat format = RecordFormat::kNdjson) {
  Result<JobSpec> spec = ParseJobSpec(job, "job.json");
  REQUIRE(spec.ok());
  Result<std::unique_ptr<Plan>> plan = CompilePlan(std::move(*spec), format);
  REQUIRE(plan.ok());
  return std::move(*plan);
}

}  // namespace

// Intent: a field no well-formed record had is named with where the job
// reads it and the nearest names seen (never itself); one that some record
// had is not; a filter that kept nothing is named.
TEST_CASE("run warnings: absent field and empty filter") {
  auto plan = MakePlan(R"({"inputs": {"files": ["x.ndjson"]}, "keep": "{/kind} == 'z'",
    "group": ["{/feedr}"], "measures": [{"name": "n", "fn": "count"}]})");
  MergeTotals t;
  t.records = 12;
  t.malformed = 2;
  t.kept = 0;
  t.field_present = {10, 0};  // {/kind}, {/feedr}
  const auto w = EndOfRunWarnings(*plan, t, {"/kind", "/feeder", "/feedr"});
  REQUIRE(w.size() == 2);
  CHECK(w[0].kind == "field_absent");
  CHECK(w[0].field == "/feedr");
  CHECK(w[0].text ==
        "job.json: /group/0: field {/feedr} was in none of the 10 well-formed records (did you mean {/feeder}?)");
  CHECK(w[1].kind == "filter_kept_none");
  CHECK(w[1].text == "job.json: /keep: the filter kept none of the 10 well-formed records");

  t.kept = 3;
  t.field_present = {10, 1};
  CHECK(EndOfRunWarnings(*plan, t, {}).empty());
}

// Intent: nothing is judged without a well-formed record or without the
// counts; a CSV column is "empty", with no suggestion (it is in the header).
TEST_CASE("run warnings: when nothing is said, and CSV wording") {
  auto plan = MakePlan(R"({"inputs": {"files": ["x.ndjson"]}, "keep": "{/a} > 1",
    "measures": [{"name": "n", "fn": "count"}]})");
  MergeTotals none;
  none.records = 4;
  none.malformed = 4;
  none.field_present = {0};
  CHECK(EndOfRunWarnings(*plan, none, {}).empty());
  MergeTotals unknown;
  unknown.records = 4;
  unknown.kept = 4;
  unknown.field_present = {0};
  unknown.field_counts_known = false;
  CHECK(EndOfRunWarnings(*plan, unknown, {"/b"}).empty());

  auto csv = MakePlan(R"({"inputs": {"files": ["x.csv"]}, "measures": [{"name": "s", "fn": "sum", "of": "{kw}"}]})",
                      RecordFormat::kCsv);
  MergeTotals t;
  t.records = 1;
  t.kept = 1;
  t.field_present = {0};
  const auto w = EndOfRunWarnings(*csv, t, {"kw", "kv"});
  REQUIRE(w.size() == 1);
  CHECK(w[0].text == "job.json: /measures/0/of: column {kw} was empty in the one well-formed record");
}
