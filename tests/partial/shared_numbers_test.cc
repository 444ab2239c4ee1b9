// A CSV field read by several numeric measures is parsed once per record
// and shared (ShardProcessor: Value::ReadTextNumber on the batch's slot).
// The measures' states must be byte for byte those of measures that each
// read the text themselves: the same job with every argument wrapped in
// coalesce(), which hands the measures an unread copy of the cell, is the
// reference. Edge cells: negative zero, text that is not a number, empty
// and quoted cells, integers beyond 2^53 and 64-bit ids, exponents.
#include <doctest/doctest.h>
#include <stdlib.h>
#include <unistd.h>

#include <filesystem>
#include <fstream>
#include <string>

#include "common/job/plan.h"
#include "common/partial/partial_codec.h"
#include "common/partial/shard_processor.h"

using namespace fanfold;

namespace {

// Every measure that reads a number, twice on the same field so that the
// second reads the first's kept result, then count_present and HyperLogLog,
// which read the text as text. ARG is "{x}" or a wrapped form of it.
std::string Measures(const std::string& arg) {
  const std::string of = "\"of\": \"" + arg + "\"";
  return R"([{"name": "s", "fn": "sum", )" + of + R"(}, {"name": "m", "fn": "mean", )" + of +
         R"(}, {"name": "v", "fn": "variance", )" + of + R"(}, {"name": "lo", "fn": "min", )" + of +
         R"(}, {"name": "hi", "fn": "max", )" + of + R"(}, {"name": "q", "fn": "quantile", )" + of +
         R"(, "at": [0.5]}, {"name": "d", "fn": "ddsketch", )" + of +
         R"(, "at": [0.5]}, {"name": "h", "fn": "histogram", )" + of +
         R"(, "edges": [-10, 0, 10]}, {"name": "first", "fn": "at_lowest", "of": "{g}", "by": ")" + arg +
         R"("}, {"name": "p", "fn": "count_present", )" + of + R"(}, {"name": "u", "fn": "hyperloglog", )" + of +
         R"(}, {"name": "s2", "fn": "sum", )" + of + "}]";
}

// The group table bytes of reduction 0 after processing path with a job
// whose measures take `arg`.
std::string GroupBytes(const std::string& dir, const std::string& path, const std::string& arg) {
  Result<JobSpec> spec = ParseJobSpec(R"({"inputs": {"files": ["s.csv"], "format": "csv"}, "group": ["{g}"],
    "measures": )" + Measures(arg) + "}",
                                      dir + "/job.json");
  REQUIRE(spec.ok());
  Result<std::unique_ptr<Plan>> plan = CompilePlan(std::move(*spec), RecordFormat::kCsv);
  REQUIRE(plan.ok());
  ShardProcessor processor(plan->get());
  ShardTask task;
  task.path = path;
  std::string bytes;
  REQUIRE(processor.Process(task, &bytes).ok());
  OpenedPartial opened;
  REQUIRE(OpenPartial(bytes, &opened).ok());
  REQUIRE(opened.reductions.size() == 1);
  return std::string(opened.reductions[0].groups);
}

}  // namespace

// Intent: sharing one parse per cell changes no measure's state by a byte.
TEST_CASE("shared numbers: a CSV cell parsed once gives the measures' own bytes") {
  char tmpl[] = "/tmp/fanfold-shared-numbers-XXXXXX";
  const std::string dir = mkdtemp(tmpl);
  const std::string path = dir + "/s.csv";
  {
    std::ofstream out(path);
    out << "g,x\n";
    // Each cell twice, in two groups, and a third group of the plain cells
    // the fast path reads (short decimals, with and without sign).
    const char* cells[] = {"-0", "0", "+0", "-0.0", "7", "-12.375", "5.", ".5", "+.5", "abc", "", "\"\"", "\"4.25\"",
                           "\"1,5\"", "1e3", "-1E-3", "nan", "inf", " 5", "+-5", "0x10", "9007199254740993",
                           "-9007199254740993", "9223372036854775807", "-9223372036854775808", "18446744073709551615",
                           "18446744073709551616", "-9223372036854775809", "123456789012345678901234567890",
                           "999999999999999", "0.000000000000001", "1234567890.1234567", "007", "-007.50"};
    for (int round = 0; round < 2; ++round)
      for (const char* c : cells) out << (round == 0 ? "a," : "b,") << c << "\n";
    for (int i = 0; i < 1000; ++i) out << "c," << (i % 3 == 0 ? "-" : "") << i / 7 << "." << i % 10 << "\n";
  }
  const std::string direct = GroupBytes(dir, path, "{x}");
  const std::string own = GroupBytes(dir, path, "coalesce({x}, {x})");
  CHECK(direct.size() > 100);
  CHECK(direct == own);
  std::filesystem::remove_all(dir);
}
