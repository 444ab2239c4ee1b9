// The job's "tables" through the plan: parsing (names, formats implied by the
// path, bare field names as column or member references), the fields records
// see (left-join semantics), and the fingerprint covering each table's
// identity and XXH3-64 content hash (docs/job-file.md, "tables"), which is how
// `resume` tells a changed table and names it.
#include "common/job/lookup_plan.h"

#include <doctest/doctest.h>
#include <stdlib.h>

#include <filesystem>
#include <fstream>
#include <string>

#include "common/job/job_loader.h"
#include "common/job/plan.h"

#include "tests/port/scratch_dir_test_util.h"

namespace fanfold {
namespace {

struct PlanDir : ScratchFiles {
  PlanDir() : ScratchFiles("fanfold-lookup-plan") {}
};

constexpr const char* kJob = R"J({"inputs": {"files": ["*.ndjson"]},
  "tables": [{"name": "lamps", "path": "lamps.csv", "key": "{lamp_id}", "match": "{/lamp}",
              "fields": ["model", {"name": "since", "expr": "num({installed})"}]},
             {"name": "models", "path": "models.ndjson.gz", "key": "{/name}", "match": "model",
              "fields": ["maker"]}],
  "group": ["model"], "measures": [{"name": "n", "fn": "count"}]})J";

// Intent: bare field names become {name} for CSV and {/name} for NDJSON; the
// format and compression come from the name as for inputs.
TEST_CASE("lookup_plan: tables parse with formats from their names") {
  Result<JobSpec> spec = ParseJobSpec(kJob, "/x/job.json");
  REQUIRE(spec.ok());
  REQUIRE(spec->tables.size() == 2);
  const TableSpec& lamps = spec->tables[0];
  CHECK(lamps.format == RecordFormat::kCsv);
  CHECK(lamps.compression == Compression::kNone);
  CHECK(lamps.fields[0].expr == "{model}");
  CHECK(lamps.fields[1].expr == "num({installed})");
  const TableSpec& models = spec->tables[1];
  CHECK(models.format == RecordFormat::kNdjson);
  CHECK(models.compression == Compression::kGzip);
  CHECK(models.fields[0].expr == "{/maker}");
  CHECK(models.match == "model");
}

// Intent: a record sees a row's fields when its match equals the key (the
// NDJSON integer 2 equals the CSV text "2", as == says), and missing ones
// otherwise, the second table looked up by what the first one brought.
TEST_CASE("lookup_plan: records see the table fields, missing without a match") {
  PlanDir dir;
  const std::string job = dir.Write("job.json", kJob);
  dir.Write("lamps.csv", "lamp_id,model,installed\n1,Aster,2011\n2,Birch,2015\n");
  std::string text = kJob;
  text.replace(text.find("models.ndjson.gz"), 16, "models.ndjson");
  dir.Write("job.json", text);
  dir.Write("models.ndjson", "{\"name\": \"Aster\", \"maker\": \"Quillmoor Works\"}\n");
  Result<JobSpec> spec = LoadJobSpec(job);
  REQUIRE(spec.ok());
  Result<std::unique_ptr<Plan>> plan = CompilePlan(std::move(spec.value()), RecordFormat::kNdjson);
  REQUIRE(plan.ok());
  const Plan& p = **plan;
  REQUIRE(p.lookups.size() == 2);
  std::vector<Value> slots(p.fields.size());
  const int lamp = p.fields.slot(0).name == "/lamp" ? 0 : -1;
  REQUIRE(lamp == 0);
  const int model = p.fields.FindDerived("model"), since = p.fields.FindDerived("since"),
            maker = p.fields.FindDerived("maker");
  REQUIRE(model >= 0);
  REQUIRE(maker >= 0);
  ScratchArena arena;
  std::string key;
  slots[lamp] = Value::Int(1);
  CHECK(p.lookups[0].Fill(slots.data(), &arena, &key));
  CHECK(p.lookups[1].Fill(slots.data(), &arena, &key));
  CHECK(slots[model].str == "Aster");
  CHECK(slots[since].number == 2011);
  CHECK(slots[maker].str == "Quillmoor Works");
  slots[lamp] = Value::Int(2);  // a lamp whose model no row of the second table has
  CHECK(p.lookups[0].Fill(slots.data(), &arena, &key));
  CHECK_FALSE(p.lookups[1].Fill(slots.data(), &arena, &key));
  CHECK(slots[model].str == "Birch");
  CHECK(slots[maker].kind == ValueKind::kMissing);
  slots[lamp] = Value::Int(3);  // no such lamp: every table field missing
  CHECK_FALSE(p.lookups[0].Fill(slots.data(), &arena, &key));
  CHECK_FALSE(p.lookups[1].Fill(slots.data(), &arena, &key));
  CHECK(slots[model].kind == ValueKind::kMissing);
  CHECK(slots[since].kind == ValueKind::kMissing);
  CHECK(slots[maker].kind == ValueKind::kMissing);
}

// Intent: the fingerprint covers the table's content: the same size and the
// same mtime (set back) with other bytes is another plan; the plan texts name
// the changed table, and LoadWorkerPlan's refusal says which one.
TEST_CASE("lookup_plan: a table's content is in the fingerprint") {
  PlanDir dir;
  const std::string job = dir.Write("job.json",
                                    R"({"inputs": {"files": ["*.ndjson"]},
      "tables": [{"name": "lamps", "path": "lamps.csv", "key": "{lamp_id}", "match": "{/lamp}", "fields": ["model"]}],
      "group": ["model"], "measures": [{"name": "n", "fn": "count"}]})");
  const std::string table = dir.Write("lamps.csv", "lamp_id,model\n1,Aster\n");
  auto compile = [&]() {
    Result<JobSpec> spec = LoadJobSpec(job);
    REQUIRE(spec.ok());
    Result<std::unique_ptr<Plan>> plan = CompilePlan(std::move(spec.value()), RecordFormat::kNdjson);
    REQUIRE(plan.ok());
    return std::move(plan.value());
  };
  std::unique_ptr<Plan> before = compile();
  const std::string before_text = PlanCanonicalText(*before);
  CHECK(before_text.find("table lamps path=" + std::filesystem::canonical(table).string() + " format=csv size=22 ") !=
        std::string::npos);
  CHECK(compile()->fingerprint == before->fingerprint);  // loading again changes nothing
  const auto mtime = std::filesystem::last_write_time(table);
  dir.Write("lamps.csv", "lamp_id,model\n1,Astre\n");  // the same 22 bytes, one changed
  std::filesystem::last_write_time(table, mtime);
  std::unique_ptr<Plan> after = compile();
  CHECK(after->lookups[0].table->identity().size == before->lookups[0].table->identity().size);
  CHECK(after->lookups[0].table->identity().mtime_ns == before->lookups[0].table->identity().mtime_ns);
  CHECK(after->fingerprint != before->fingerprint);
  CHECK(ChangedLookupTables(before_text, PlanCanonicalText(*after)) ==
        "lookup table \"lamps\" ('" + std::filesystem::canonical(table).string() + "')");
  CHECK(ChangedLookupTables(before_text, before_text).empty());
  Result<std::unique_ptr<Plan>> worker =
      LoadWorkerPlan(job, "ndjson", FingerprintHex(before->fingerprint), "", before_text);
  REQUIRE_FALSE(worker.ok());
  CHECK(worker.status().message().rfind("lookup table \"lamps\"", 0) == 0);
}

// Intent: a job without tables keeps its canonical text: no "table" line.
TEST_CASE("lookup_plan: no tables, no table lines") {
  Result<JobSpec> spec = ParseJobSpec(R"({"inputs": {"files": ["a.ndjson"]}, "measures": [{"name": "n", "fn": "count"}]})",
                                      "job.json");
  REQUIRE(spec.ok());
  Result<std::unique_ptr<Plan>> plan = CompilePlan(std::move(spec.value()), RecordFormat::kNdjson);
  REQUIRE(plan.ok());
  CHECK(PlanCanonicalText(**plan).find("\ntable ") == std::string::npos);
}

}  // namespace
}  // namespace fanfold
