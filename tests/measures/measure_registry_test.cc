// Tests for the measure registry: one row per kind, lookups both ways, the
// rows' column counts match what the states finalize, every row's options
// exist, the fuzzers cover every row, and docs/measures.md names them all.
#include "common/measures/measure_registry.h"

#include <doctest/doctest.h>

#include <fstream>
#include <set>
#include <sstream>

#include "common/job/job_spec.h"
#include "common/measures/measure_options.h"
#include "tests/fuzz/fuzz_measure_configs.h"
#include "tests/measures/measure_test_util.h"

namespace fanfold {
namespace {

std::string ReadSourceFile(const std::string& relative) {
  std::ifstream in(std::string(FANFOLD_SOURCE_DIR) + "/" + relative);
  REQUIRE_MESSAGE(in.good(), relative);
  std::stringstream ss;
  ss << in.rdbuf();
  return ss.str();
}

// Intent: rows are in kind order with distinct names, and the lookups by
// kind and by name find the same row.
TEST_CASE("measure registry: one row per kind, found both ways") {
  std::set<std::string> names;
  for (size_t i = 0; i < MeasureRows().size(); ++i) {
    const MeasureRow& row = MeasureRows()[i];
    CHECK(static_cast<size_t>(row.kind) == i + 1);
    CHECK(names.insert(row.fn).second);
    CHECK(&MeasureRowOf(row.kind) == &row);
    CHECK(FindMeasureRow(row.fn) == &row);
    CHECK(std::string(MeasureFnName(row.kind)) == row.fn);
    CHECK(MeasureArgCount(row.kind) == row.arg_count);
    CHECK(row.arg_count >= 0);
    CHECK(row.arg_count <= 2);
    for (const char* o : row.options) CHECK(FindMeasureOption(o) != nullptr);
  }
  CHECK(FindMeasureRow("median") == nullptr);
}

// Intent: a row's column names are as many as the cells its state
// finalizes, for one and for several probabilities.
TEST_CASE("measure registry: columns match what the state finalizes") {
  for (const MeasureRow& row : MeasureRows()) {
    for (const std::vector<double>& at : {std::vector<double>{0.5}, std::vector<double>{0.1, 0.5, 0.99}}) {
      INFO("fn " << std::string(row.fn));
      MeasureConfig c;
      c.kind = row.kind;
      c.probabilities = at;
      c.edges = {0};  // histogram: below, a bin per pair of edges, above
      c.edges.insert(c.edges.end(), at.begin(), at.end());
      const std::vector<std::string> columns = row.columns("m", c);
      CHECK(columns.size() == OutputColumnCount(c));
      CHECK(testing::FinalOf(*NewMeasureState(c)).size() == columns.size());
      const size_t expected = row.Takes("at") ? at.size() : row.Takes("edges") ? at.size() + 2 : 1u;
      CHECK(columns.size() == expected);
    }
  }
}

// Intent: top's cross-option rule refuses a limit below k and names the key.
TEST_CASE("measure registry: top needs a limit of at least k") {
  const MeasureRow& top = MeasureRowOf(MeasureKind::kTop);
  REQUIRE((top.check != nullptr));
  MeasureConfig c;
  c.kind = MeasureKind::kTop;
  c.k = 5;
  c.limit = 5;
  CHECK(!top.check(c).has_value());
  c.limit = 4;
  REQUIRE(top.check(c).has_value());
  CHECK(top.check(c)->key == "limit");
  CHECK(top.check(c)->expected == "a limit of at least k (5)");
}

// Intent: the fuzzers decode with a config of every registered measure.
TEST_CASE("measure registry: the fuzz configs cover every row") {
  std::set<MeasureKind> fuzzed;
  for (const MeasureConfig& c : FuzzMeasureConfigs()) fuzzed.insert(c.kind);
  CHECK(fuzzed.size() == MeasureRows().size());
}

// Intent: the user's documentation names every measure the job file accepts,
// and docs/job-file.md every option key.
TEST_CASE("measure registry: the documentation names every measure and option") {
  const std::string measures = ReadSourceFile("docs/measures.md");
  const std::string job_file = ReadSourceFile("docs/job-file.md");
  for (const MeasureRow& row : MeasureRows()) {
    INFO("fn " << std::string(row.fn));
    CHECK(measures.find(std::string("`") + row.fn + "`") != std::string::npos);
    CHECK(job_file.find(std::string("`") + row.fn + "`") != std::string::npos);
  }
  for (const MeasureOption& o : kMeasureOptions) {
    INFO("option " << std::string(o.key));
    CHECK(job_file.find(std::string("`") + o.key + "`") != std::string::npos);
  }
}

}  // namespace
}  // namespace fanfold
