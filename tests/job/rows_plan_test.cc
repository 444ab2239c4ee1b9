// Tests for the "rows" step of a job: parsing, compiling over the result's
// columns by name, the errors (with JSON Pointers and nearest names), and
// that it stays out of the plan fingerprint.
#include <doctest/doctest.h>

#include <string>

#include "common/job/plan.h"

using namespace fanfold;

namespace {

constexpr const char* kHead =
    R"j({"inputs": {"files": ["a"]}, "group": ["{/district}"],
        "measures": [{"name": "events", "fn": "count"},
                     {"name": "w", "fn": "sum", "of": "{/power_w}"},
                     {"name": "lat", "fn": "quantile", "of": "{/ms}", "at": [0.5, 0.999]}])j";

Result<std::unique_ptr<Plan>> Compile(const std::string& rows) {
  Result<JobSpec> spec = ParseJobSpec(std::string(kHead) + (rows.empty() ? "" : ", \"rows\": " + rows) + "}", "j.json");
  if (!spec.ok()) return spec.status();
  return CompilePlan(std::move(spec.value()), RecordFormat::kNdjson);
}

std::string ErrorOf(const std::string& rows) {
  Result<std::unique_ptr<Plan>> plan = Compile(rows);
  REQUIRE_FALSE(plan.ok());
  return plan.status().message();
}

}  // namespace

// Added columns read key, measure and earlier added columns; slots follow the result's column order.
TEST_CASE("rows plan compiles added columns and the row filter over named columns") {
  Result<std::unique_ptr<Plan>> plan = Compile(
      R"j({"add": [{"name": "per", "expr": "w / events", "shown_digits": 3},
                  {"name": "spread", "expr": "column('lat_p99.9') - lat_p50"},
                  {"name": "twice", "expr": "per * 2"}],
          "keep": "events > 10 and district != 'x' and twice > 0"})j");
  REQUIRE(plan.ok());
  const RowsPlan& r = (*plan)->reductions[0].rows;
  CHECK(r.merged_columns == 5);
  REQUIRE(r.add.size() == 3);
  CHECK(r.add[0].shown_digits == 3);
  CHECK(r.AddedNames() == std::vector<std::string>{"per", "spread", "twice"});
  CHECK(r.add[0].expr.SlotsRead() == std::vector<int>{1, 2});
  CHECK(r.add[1].expr.SlotsRead() == std::vector<int>{3, 4});
  CHECK(r.add[2].expr.SlotsRead() == std::vector<int>{5});
  REQUIRE(r.keep.has_value());
  CHECK(r.keep->SlotsRead() == std::vector<int>{0, 1, 7});
  // The record side never sees the rows step's names.
  CHECK((*plan)->reductions[0].columns.size() == 5);
}

// Changing only the rows step keeps the fingerprint, so resume reuses every partial.
TEST_CASE("rows step is not part of the plan fingerprint") {
  Result<std::unique_ptr<Plan>> none = Compile("");
  Result<std::unique_ptr<Plan>> some = Compile(R"j({"add": [{"name": "per", "expr": "w / events"}], "keep": "per > 1"})j");
  REQUIRE(none.ok());
  REQUIRE(some.ok());
  CHECK((*none)->fingerprint == (*some)->fingerprint);
  CHECK(PlanCanonicalText(**none) == PlanCanonicalText(**some));
}

// emit.order may name an added column, and a misspelt one is offered the added names too.
TEST_CASE("emit.order sees the added columns") {
  Result<JobSpec> spec = ParseJobSpec(
      std::string(kHead) + R"j(, "rows": {"add": [{"name": "share", "expr": "w / events"}]},
                             "emit": {"order": [{"by": "shrae"}]}})j",
      "j.json");
  REQUIRE(spec.ok());
  Result<std::unique_ptr<Plan>> plan = CompilePlan(std::move(spec.value()), RecordFormat::kNdjson);
  REQUIRE_FALSE(plan.ok());
  CHECK(plan.status().message() ==
        "j.json: /emit/order/0/by: found \"shrae\" (did you mean \"share\"?); expected an output column: "
        "district, events, w, lat_p50, lat_p99.9, share");
}

// Every error names the pointer, the column in the expression, what was found and what was expected.
TEST_CASE("rows step errors are in our words") {
  CHECK(ErrorOf(R"j({"add": [{"name": "x", "expr": "w / evnts"}]})j") ==
        "j.json: /rows/add/0/expr: column 5: found unknown column 'evnts' (did you mean 'events'?); expected a "
        "column of the result row: district, events, w, lat_p50, lat_p99.9");
  CHECK(ErrorOf(R"j({"keep": "{/power_w} > 1"})j") ==
        "j.json: /rows/keep: column 1: found field {/power_w} (a field of the records); expected a column of the "
        "result row: after aggregation there are no records, so an expression here names columns, as a bare name "
        "(events) or column('name')");
  CHECK(ErrorOf(R"j({"keep": "{/district} == 'a'"})j").find("found field {/district} (did you mean district?)") !=
        std::string::npos);
  CHECK(ErrorOf(R"j({"add": [{"name": "x", "expr": "column(w)"}]})j") ==
        "j.json: /rows/add/0/expr: column 1: found column() with 1 argument that is not a string literal; "
        "expected column('a column name'): one string literal");
  CHECK(ErrorOf(R"j({"add": [{"name": "x", "expr": "lat_p99.9 - lat_p50"}]})j") ==
        "j.json: /rows/add/0/expr: column 8: number .9; expected an operator or the end of the expression (a "
        "column whose name is not a bare word is written column('lat_p99.9'))");
  // A column cannot read itself or a later one.
  CHECK(ErrorOf(R"j({"add": [{"name": "x", "expr": "x + 1"}]})j").find("found unknown column 'x'") !=
        std::string::npos);
  CHECK(ErrorOf(R"j({"add": [{"name": "x", "expr": "y"}, {"name": "y", "expr": "1"}]})j")
            .find("/rows/add/0/expr: column 1: found unknown column 'y'") != std::string::npos);
  CHECK(ErrorOf(R"j({"add": [{"name": "events", "expr": "1"}]})j") ==
        "j.json: /rows/add/0/name: found \"events\", a column the result already has; expected a new column name");
  CHECK(ErrorOf(R"j({"add": [{"name": "x", "expr": "1"}], "kepe": "x"})j") ==
        "j.json: /rows/kepe: found unknown key \"kepe\" (did you mean \"keep\"?); expected one of: add, keep");
  CHECK(ErrorOf(R"j({"add": [{"name": "x", "expr": "1", "shown_digits": 0}]})j") ==
        "j.json: /rows/add/0/shown_digits: found 0 (an integer); expected an integer in [1, 17]");
  CHECK(ErrorOf(R"j({"add": {"name": "x"}})j") ==
        "j.json: /rows/add: found an object; expected an array of {\"name\": ..., \"expr\": ...}");
  CHECK(ErrorOf(R"j({"add": [{"name": "x"}]})j") ==
        "j.json: /rows/add/0: found no \"expr\"; expected \"expr\": an expression");
  CHECK(ErrorOf(R"j([])j") == "j.json: /rows: found an array; expected an object with \"add\" and/or \"keep\"");
  CHECK(ErrorOf(R"j({"add": [{"name": "x", "expr": "lowr(district)"}]})j")
            .find("/rows/add/0/expr: column 1: unknown function 'lowr' (did you mean lower()?)") != std::string::npos);
}
