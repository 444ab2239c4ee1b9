// Tests for ApplyRowsStep: added columns computed per result row (exact
// integers stay exact, division by zero and missing inputs give null and are
// counted), the row filter, and cells kept as they are when copied.
#include <doctest/doctest.h>

#include <string>

#include "common/job/plan.h"
#include "coordinator/output/rows_step.h"

using namespace fanfold;

namespace {

// A plan grouped by district with measures n (count) and s (sum), plus `rows`.
std::unique_ptr<Plan> PlanWith(const std::string& rows) {
  Result<JobSpec> spec = ParseJobSpec(
      R"j({"inputs": {"files": ["a"]}, "group": ["{/district}"],
          "measures": [{"name": "n", "fn": "count"}, {"name": "s", "fn": "sum", "of": "{/x}"}],
          "rows": )j" + rows + "}",
      "j.json");
  REQUIRE(spec.ok());
  Result<std::unique_ptr<Plan>> plan = CompilePlan(std::move(spec.value()), RecordFormat::kNdjson);
  REQUIRE(plan.ok());
  return std::move(plan.value());
}

OutputTable Table(std::vector<std::vector<Cell>> rows) {
  OutputTable t;
  t.columns = {"district", "n", "s"};
  t.key_columns = 1;
  t.rows = std::move(rows);
  return t;
}

}  // namespace

// Ratios, differences and string results per row; 0 and null denominators give null, counted per column.
TEST_CASE("added columns are computed from each row's finished cells") {
  auto plan = PlanWith(R"j({"add": [{"name": "per", "expr": "s / n"}, {"name": "rest", "expr": "s - n"},
                                    {"name": "loud", "expr": "upper(district)"}]})j");
  OutputTable t = Table({{Cell::String("a"), Cell::Int(4), Cell::Int(10)},
                         {Cell::String("b"), Cell::Int(0), Cell::Int(3)},
                         {Cell::Null(), Cell::Int(2), Cell::Null()}});
  RowsStepCounts c = ApplyRowsStep(plan->reductions[0].rows, &t);
  CHECK(t.columns == std::vector<std::string>{"district", "n", "s", "per", "rest", "loud"});
  REQUIRE(t.rows.size() == 3);
  CHECK(t.rows[0][3].kind == Cell::Kind::kFloat);
  CHECK(t.rows[0][3].number == 2.5);  // 10 / 4, exact in binary
  CHECK(t.rows[0][4].kind == Cell::Kind::kInt);
  CHECK(t.rows[0][4].integer == 6);
  CHECK(t.rows[0][5].str == "A");
  CHECK(t.rows[1][3].kind == Cell::Kind::kNull);  // 3 / 0
  CHECK(t.rows[1][4].integer == 3);
  CHECK(t.rows[2][3].kind == Cell::Kind::kNull);  // null / 2
  CHECK(t.rows[2][4].kind == Cell::Kind::kNull);
  CHECK(t.rows[2][5].kind == Cell::Kind::kNull);  // upper(null)
  CHECK(c.no_value == std::vector<uint64_t>{2, 1, 1});
  CHECK(c.rows_in == 3);
  CHECK(c.rows_dropped == 0);
}

// 64-bit integers past 2^53 stay exact through + and -; sums past 2^64 read as their nearest double.
TEST_CASE("integer columns stay exact where the expression language keeps them") {
  auto plan = PlanWith(R"j({"add": [{"name": "d", "expr": "s - n"}, {"name": "copy", "expr": "s"}]})j");
  const __int128 big = static_cast<__int128>(UINT64_MAX);  // 18446744073709551615
  const __int128 wider = big * 4;                          // an exact wide sum
  OutputTable t = Table({{Cell::String("a"), Cell::Int(1), Cell::Int(big)},
                         {Cell::String("b"), Cell::Int(1), Cell::Int(wider)}});
  ApplyRowsStep(plan->reductions[0].rows, &t);
  CHECK(t.rows[0][3].kind == Cell::Kind::kInt);
  CHECK(t.rows[0][3].integer == big - 1);  // 18446744073709551614: a double would round it
  CHECK(t.rows[1][3].kind == Cell::Kind::kFloat);
  CHECK(t.rows[1][3].number == static_cast<double>(wider) - 1.0);
  CHECK(t.rows[1][4].kind == Cell::Kind::kInt);  // a plain copy keeps the cell as it is
  CHECK(t.rows[1][4].integer == wider);
}

// The filter drops rows before ordering; it may read added columns; untrue and null both drop.
TEST_CASE("rows.keep drops the rows it does not keep and counts them") {
  auto plan = PlanWith(R"j({"add": [{"name": "per", "expr": "s / n"}], "keep": "per >= 2"})j");
  OutputTable t = Table({{Cell::String("a"), Cell::Int(4), Cell::Int(10)},
                         {Cell::String("b"), Cell::Int(0), Cell::Int(3)},
                         {Cell::String("c"), Cell::Int(2), Cell::Int(2)},
                         {Cell::String("d"), Cell::Int(1), Cell::Float(7.5)}});
  RowsStepCounts c = ApplyRowsStep(plan->reductions[0].rows, &t);
  REQUIRE(t.rows.size() == 2);
  CHECK(t.rows[0][0].str == "a");
  CHECK(t.rows[1][0].str == "d");
  CHECK(t.rows[1][3].number == 7.5);
  CHECK(c.rows_in == 4);
  CHECK(c.rows_dropped == 2);
  CHECK(c.no_value == std::vector<uint64_t>{1});
}

// A list cell (a top-k result) is no number: arithmetic on it has no value, a copy keeps the list.
TEST_CASE("list cells read as present but not numbers") {
  auto plan = PlanWith(R"j({"add": [{"name": "plus", "expr": "s + 1"}, {"name": "same", "expr": "column('s')"}]})j");
  OutputTable t = Table({{Cell::String("a"), Cell::Int(1), Cell::List({Cell::Int(5)})}});
  RowsStepCounts c = ApplyRowsStep(plan->reductions[0].rows, &t);
  CHECK(t.rows[0][3].kind == Cell::Kind::kNull);
  CHECK(t.rows[0][4].kind == Cell::Kind::kList);
  CHECK(c.no_value == std::vector<uint64_t>{1, 0});
}
