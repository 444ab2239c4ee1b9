// Tests for the field check made before any work: a CSV column missing from
// a header is an error naming where the job reads it and the nearest
// columns; an NDJSON field in no sampled record is a warning.
#include "coordinator/run/field_precheck.h"

#include <stdlib.h>

#include <filesystem>
#include <fstream>
#include <string>

#include <doctest/doctest.h>

#include "common/job/job_loader.h"

using namespace fanfold;

namespace {

// A fresh directory under /tmp, removed with everything in it.
class Scratch {
 public:
  Scratch() {
    char tmpl[] = "/tmp/fanfold-precheck-XXXXXX";
    path_ = mkdtemp(tmpl);
  }
  ~Scratch() { std::filesystem::remove_all(path_); }
  std::string Write(const std::string& name, const std::string& bytes) const {
    const std::string p = path_ + "/" + name;
    std::ofstream(p, std::ios::binary) << bytes;
    return p;
  }

 private:
  std::string path_;
};

LoadedJob Load(const std::string& path) {
  Result<LoadedJob> job = LoadJob(path);
  REQUIRE(job.ok());
  return std::move(*job);
}

}  // namespace

// Intent: the first shard whose header lacks a referenced column stops the
// check with a usage error that names the job file, the expression's place,
// the shard and the nearest column.
TEST_CASE("field precheck: a CSV column missing from a header is an error") {
  Scratch d;
  d.Write("a.csv", "feeder,kw\nF-1,3\n");
  d.Write("b.csv", "feeder,kv\nF-2,4\n");  // the second shard lacks kw
  const std::string job = d.Write("job.json", R"({"inputs": {"files": ["*.csv"]},
    "group": ["{feeder}"], "measures": [{"name": "s", "fn": "sum", "of": "{kw}"}]})");
  LoadedJob j = Load(job);
  FieldPrecheck p = PrecheckFields(*j.plan, j.shards);
  REQUIRE_FALSE(p.error.ok());
  CHECK(p.error.code() == Status::Code::kInvalidArgument);
  const std::string m = p.error.message();
  CHECK(m.find(job + ": /measures/0/of: column {kw} is not in the header of shard 1 '") == 0);
  CHECK(m.find("b.csv' (did you mean {kv}?); its columns: feeder, kv") != std::string::npos);
}

// Intent: NDJSON fields in none of the sampled records are warnings with the
// nearest names; the sample reads every record of small shards and says so.
TEST_CASE("field precheck: NDJSON fields never seen are warnings") {
  Scratch d;
  d.Write("a.ndjson", "{\"feeder\": \"F-1\", \"fw\": {\"version\": \"4\"}}\n");
  d.Write("b.ndjson", "{\"feeder\": \"F-2\"}\n");
  const std::string job = d.Write("job.json", R"({"inputs": {"files": ["*.ndjson"]},
    "derive": [{"name": "f", "expr": "{/feedr}"}], "group": ["f", "{/fw/version}"],
    "measures": [{"name": "n", "fn": "count"}]})");
  LoadedJob j = Load(job);
  FieldPrecheck p = PrecheckFields(*j.plan, j.shards);
  REQUIRE(p.error.ok());
  REQUIRE(p.warnings.size() == 1);
  CHECK(p.unseen == 1);
  CHECK(p.judged);
  CHECK(p.warnings[0] == job +
                             ": /derive/0/expr: field {/feedr} is in none of the 2 records of the job's 2 shards "
                             "(did you mean {/feeder}?)");
  CHECK(p.sampled == "2 records of the job's 2 shards");

  SampleLimits one;
  one.max_records = 1;
  FieldPrecheck q = PrecheckFields(*j.plan, j.shards, one);
  REQUIRE(q.warnings.size() == 1);
  CHECK(q.warnings[0].find("field {/feedr} is not in the one record sampled from the first of 2 shards") !=
        std::string::npos);
}

// Intent: the place a field is first read follows the job file's order
// (derive, keep, group, measures), and "" for a field read nowhere.
TEST_CASE("field precheck: where a field is read") {
  Scratch d;
  d.Write("a.ndjson", "{}\n");
  const std::string job = d.Write("job.json", R"({"inputs": {"files": ["*.ndjson"]}, "keep": "{/b} > 0",
    "group": ["{/a}"], "measures": [{"name": "f", "fn": "at_lowest", "of": "{/a}", "by": "{/c}"}]})");
  LoadedJob j = Load(job);
  CHECK(WhereFieldIsRead(*j.plan, "/b") == "/keep");
  CHECK(WhereFieldIsRead(*j.plan, "/a") == "/group/0");
  CHECK(WhereFieldIsRead(*j.plan, "/c") == "/measures/0/by");
  CHECK(WhereFieldIsRead(*j.plan, "/zzz") == "");
}
