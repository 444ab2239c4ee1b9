// Tests for choosing the result format from -o FILE's extension.
#include <doctest/doctest.h>

#include "coordinator/output/output_extension.h"

using namespace fanfold;

TEST_CASE("known extensions name a format; others keep the job's") {
  // Intent: the documented extension table, in any letter case; unknown or none = nullopt.
  CHECK(FormatForExtension("out.csv") == OutputFormat::kCsv);
  CHECK(FormatForExtension("dir.d/OUT.JSON") == OutputFormat::kJson);
  CHECK(FormatForExtension("a.ndjson") == OutputFormat::kNdjson);
  CHECK(FormatForExtension("a.jsonl") == OutputFormat::kNdjson);
  CHECK(FormatForExtension("a.txt") == OutputFormat::kTable);
  CHECK(FormatForExtension("a.table") == OutputFormat::kTable);
  CHECK_FALSE(FormatForExtension("a.tsv").has_value());
  CHECK_FALSE(FormatForExtension("result").has_value());
  CHECK_FALSE(FormatForExtension("csv").has_value());
  CHECK_FALSE(FormatForExtension("-").has_value());
  CHECK_FALSE(FormatForExtension("").has_value());
}

TEST_CASE("an extension overrides the default format, never a format the job sets") {
  // Intent: -o x.csv writes CSV unless the job says another format, which is a usage error.
  EmitSpec emit;
  CHECK(*ChooseOutputFormat("x.csv", emit) == OutputFormat::kCsv);
  CHECK(*ChooseOutputFormat("x.out", emit) == OutputFormat::kTable);
  emit.format = OutputFormat::kJson;
  emit.format_given = true;
  CHECK(*ChooseOutputFormat("x.json", emit) == OutputFormat::kJson);
  CHECK(*ChooseOutputFormat("x", emit) == OutputFormat::kJson);
  Result<OutputFormat> clash = ChooseOutputFormat("x.csv", emit);
  REQUIRE_FALSE(clash.ok());
  CHECK(clash.status().message().find("\"csv\"") != std::string::npos);
  CHECK(clash.status().message().find("emit.format is \"json\"") != std::string::npos);
}
