// Tests for coordinator/cli/cli and the subcommand table: every usage error,
// whether CLI11 finds it or a flag check does, leaves through the one path
// that asks main() for the --help hint; nothing is run.
#include "coordinator/cli/cli.h"

#include <doctest/doctest.h>

#include <string>
#include <vector>

#include "coordinator/cli/subcommand_table.h"

namespace fanfold {
namespace {

CliOutcome Parse(std::vector<std::string> args) {
  args.insert(args.begin(), "fanfold");
  std::vector<char*> argv;
  for (std::string& a : args) argv.push_back(a.data());
  return ParseAndRun(static_cast<int>(argv.size()), argv.data());
}

TEST_CASE("the subcommand table lists each subcommand once, in the order of fanfold --help") {
  // Intent: the table is the one list of subcommands; a row without a factory would crash the parser.
  std::vector<std::string> names;
  for (const SubcommandRow& row : SubcommandTable()) {
    names.push_back(row.name);
    CHECK(static_cast<bool>(row.make));
    CHECK(std::string(row.example).rfind(std::string("fanfold ") + row.name + " ", 0) == 0);
  }
  CHECK(names == std::vector<std::string>{"run", "resume", "refresh", "merge", "check", "scale", "report"});
}

TEST_CASE("an unknown subcommand is a usage error listing the table") {
  // Intent: the list in the message comes from the table, in its order.
  CliOutcome c = Parse({"frobnicate", "job.json"});
  CHECK(c.usage_hint);
  CHECK(c.outcome.status.message() ==
        "unknown command 'frobnicate'; expected one of: run, resume, refresh, merge, check, scale, report");
}

TEST_CASE("CLI11's errors and the flag checks' errors take the same usage path") {
  // Intent: a missing positional (CLI11) and a bad number (numeric_flag) both ask for the hint, with exit 2's code.
  CliOutcome missing = Parse({"run"});
  CHECK(missing.usage_hint);
  CHECK(missing.outcome.status.code() == Status::Code::kInvalidArgument);
  CHECK(missing.outcome.status.message().find("JOB") != std::string::npos);

  CliOutcome bad = Parse({"run", "no-such-job.json", "--attempts", "101"});
  CHECK(bad.usage_hint);
  CHECK(bad.outcome.status.code() == Status::Code::kInvalidArgument);
  CHECK(bad.outcome.status.message() == "--attempts: expected a whole number from 1 to 100, found '101'");

  CliOutcome repeat = Parse({"scale", "no-such-job.json", "--workers", "1", "--repeat", "0"});
  CHECK(repeat.usage_hint);
  CHECK(repeat.outcome.status.message() == "--repeat: expected a whole number from 1 to 100, found '0'");
}

TEST_CASE("checked flags pass on to the command, whose own errors are not usage errors") {
  // Intent: good flags reach the command; a missing job file is the command's error (no hint).
  CliOutcome c = Parse({"run", "no-such-job.json", "-j", "2", "--attempts", "5", "--shard-time-limit", "1.5",
                        "--progress-every", "0.5", "--progress", "off"});
  CHECK_FALSE(c.usage_hint);
  CHECK_FALSE(c.outcome.status.ok());
  CHECK(c.outcome.status.message().find("no-such-job.json") != std::string::npos);
}

}  // namespace
}  // namespace fanfold
