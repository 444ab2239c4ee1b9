// Tests for CompilePlan: column naming, fingerprints, located expression
// errors, and which derived fields are evaluated where.
#include <doctest/doctest.h>

#include "common/job/plan.h"

using namespace fanfold;

namespace {
std::unique_ptr<Plan> Compile(const std::string& json, RecordFormat f = RecordFormat::kNdjson) {
  Result<JobSpec> spec = ParseJobSpec(json, "job.json");
  REQUIRE(spec.ok());
  Result<std::unique_ptr<Plan>> plan = CompilePlan(spec.value(), f);
  REQUIRE(plan.ok());
  return std::move(plan.value());
}

std::string CompileError(const std::string& json, RecordFormat f = RecordFormat::kNdjson) {
  Result<JobSpec> spec = ParseJobSpec(json, "job.json");
  REQUIRE(spec.ok());
  Result<std::unique_ptr<Plan>> plan = CompilePlan(spec.value(), f);
  REQUIRE(!plan.ok());
  return plan.status().message();
}
}  // namespace

TEST_CASE("derived fields are evaluated only where needed") {
  // Intent: the filter's derived fields (and what they read) come first, the
  // keys' and measures' after the filter, unused ones never.
  auto plan = Compile(R"J({"inputs": {"files": ["a"]},
    "derive": [{"name": "a", "expr": "{/x} + 1"}, {"name": "b", "expr": "a * 2"},
               {"name": "c", "expr": "lower({/s})"}, {"name": "unused", "expr": "{/y}"}],
    "keep": "b > 3", "group": ["c"], "measures": [{"name": "n", "fn": "count"}]})J");
  CHECK(plan->derive_before_keep == std::vector<size_t>{0, 1});
  CHECK(plan->derive_after_keep == std::vector<size_t>{2});
  CHECK(plan->reductions[0].columns == std::vector<std::string>{"c", "n"});
}

TEST_CASE("column names and quantile columns") {
  // Intent: a lone field reference is named by its last pointer token; quantiles get _pNN.
  auto plan = Compile(R"J({"inputs": {"files": ["a"]}, "group": ["{/site/district}", "lower({/k})"],
    "measures": [{"name": "lat", "fn": "quantile", "of": "{/l}", "at": [0.5, 0.999]}]})J");
  CHECK(plan->reductions[0].columns == std::vector<std::string>{"district", "lower({/k})", "lat_p50", "lat_p99.9"});
}

TEST_CASE("the fingerprint covers the computation, not the output options") {
  // Intent: resume may change emit options, never the computation.
  const char* a = R"J({"inputs": {"files": ["a"]}, "measures": [{"name": "n", "fn": "count"}]})J";
  const char* b = R"J({"inputs": {"files": ["b"]}, "measures": [{"name": "n", "fn": "count"}], "emit": {"limit": 3}})J";
  const char* c = R"J({"inputs": {"files": ["a"]}, "keep": "{/x} > 1", "measures": [{"name": "n", "fn": "count"}]})J";
  CHECK(Compile(a)->fingerprint == Compile(b)->fingerprint);
  CHECK(Compile(a)->fingerprint != Compile(c)->fingerprint);
  CHECK(Compile(a, RecordFormat::kCsv)->fingerprint != Compile(a)->fingerprint);
}

TEST_CASE("expression errors carry the JSON Pointer and the column") {
  // Intent: the user learns which expression and where in it.
  const std::string bad_keep =
      R"J({"inputs": {"files": ["a"]}, "keep": "{/x} >", "measures": [{"name": "n", "fn": "count"}]})J";
  std::string m = CompileError(bad_keep);
  CHECK(m.rfind("job.json: /keep: column ", 0) == 0);
  m = CompileError(R"J({"inputs": {"files": ["a"]}, "measures": [{"name": "n", "fn": "sum", "of": "{x}"}]})J");
  CHECK(m.find("/measures/0/of: field {x} is not a JSON Pointer") != std::string::npos);
  m = CompileError(R"J({"inputs": {"files": ["a"]}, "derive": [{"name": "a", "expr": "a + 1"}],
    "measures": [{"name": "n", "fn": "count"}]})J");
  CHECK(m.find("/derive/0/expr") != std::string::npos);  // a field cannot read itself
  m = CompileError(R"J({"inputs": {"files": ["a"]}, "group": ["{/n}"], "measures": [{"name": "n", "fn": "count"}]})J");
  CHECK(m.find("/measures/0/name: output column \"n\" is already used") != std::string::npos);
}

TEST_CASE("DirectSlot names the slot of a plain reference only") {
  // Intent: the shortcut the aggregator takes is exact: only a lone field or
  // derived-field reference skips the evaluator.
  FieldTable fields;
  Result<Expr> plain = Expr::Compile("{/a}", &fields);
  Result<Expr> sum = Expr::Compile("{/a} + 1", &fields);
  REQUIRE(plain.ok());
  REQUIRE(sum.ok());
  CHECK(plain->DirectSlot() == fields.InternField("/a"));
  CHECK(sum->DirectSlot() == -1);
  fields.AddDerived("d");
  Result<Expr> derived = Expr::Compile("d", &fields);
  REQUIRE(derived.ok());
  CHECK(derived->DirectSlot() == fields.FindDerived("d"));
}

TEST_CASE("several reductions: shared and own derived fields, scopes and columns") {
  // Intent: the job's derived fields are evaluated once, after the job's
  // filter, iff some reduction reads them; a reduction's own come after its
  // filter (or before it, when the filter reads them); a later reduction may
  // reuse an earlier one's derived name for a field of its own.
  auto plan = Compile(R"J({"inputs": {"files": ["a"]},
    "derive": [{"name": "t", "expr": "{/x} + 1"}, {"name": "unused", "expr": "{/y}"}],
    "keep": "{/z} > 0",
    "reductions": [
      {"name": "a", "derive": [{"name": "k", "expr": "t * 2"}], "keep": "k > 3", "group": ["k"],
       "measures": [{"name": "n", "fn": "count"}]},
      {"name": "b", "derive": [{"name": "k", "expr": "lower({/s})"}], "group": ["k"],
       "measures": [{"name": "n", "fn": "count"}, {"name": "s", "fn": "sum", "of": "t"}]}]})J");
  REQUIRE(plan->reductions.size() == 2);
  CHECK(plan->derive_before_keep.empty());
  CHECK(plan->derive_after_keep == std::vector<size_t>{0});  // t; unused never
  CHECK(plan->reductions[0].derive_before_keep == std::vector<size_t>{2});
  CHECK(plan->reductions[0].derive_after_keep.empty());
  CHECK(plan->reductions[1].derive_before_keep.empty());
  CHECK(plan->reductions[1].derive_after_keep == std::vector<size_t>{3});
  CHECK(plan->reductions[0].columns == std::vector<std::string>{"k", "n"});
  CHECK(plan->reductions[1].columns == std::vector<std::string>{"k", "n", "s"});
  CHECK(plan->derive[3].pointer == "/reductions/1/derive/0/expr");
  // Intent: the canonical text names each reduction, so renaming one changes the fingerprint.
  auto renamed = Compile(R"J({"inputs": {"files": ["a"]}, "reductions": [
      {"name": "c", "measures": [{"name": "n", "fn": "count"}]}]})J");
  auto original = Compile(R"J({"inputs": {"files": ["a"]}, "reductions": [
      {"name": "d", "measures": [{"name": "n", "fn": "count"}]}]})J");
  CHECK(renamed->fingerprint != original->fingerprint);
  CHECK(PlanCanonicalText(*renamed).find("\nreduction c\n keep=\n measure n fn=count") != std::string::npos);
}
