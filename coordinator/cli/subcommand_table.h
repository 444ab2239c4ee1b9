// The table of `fanfold` subcommands (run, resume, check, scale, report): one
// row each with its name, its help line, its example and a factory for its
// Subcommand, which declares the subcommand's flags on a CLI11 sub-app, bound
// to its own options, checks them once parsed, and runs the command. The CLI
// (cli.cc) builds the parser from this table. Main thread only.
#pragma once

#include <memory>
#include <span>

#include "common/base/status.h"
#include "coordinator/cli/run_command.h"

namespace CLI {
class App;
}  // namespace CLI

namespace fanfold {

// One subcommand as the command line sees it; one object per process.
class Subcommand {
 public:
  virtual ~Subcommand() = default;
  // Declares the positional arguments and flags on cmd, bound to members.
  // REQUIRES: called once, before parsing; *this outlives the parse.
  virtual void AddFlags(CLI::App* cmd) = 0;
  // Turns what CLI11 left as text into the command's options. A non-ok
  // Status is a usage error (exit 2 and the --help hint). REQUIRES: parsed.
  virtual Status CheckFlags() = 0;
  // Runs the command. REQUIRES: CheckFlags() returned ok.
  virtual CommandOutcome Run() = 0;
};

struct SubcommandRow {
  const char* name;     // as typed: "run"
  const char* summary;  // its line in `fanfold --help`
  const char* example;  // the example `fanfold NAME --help` ends with
  std::unique_ptr<Subcommand> (*make)();
};

// The subcommands in the order `fanfold --help` lists them.
std::span<const SubcommandRow> SubcommandTable();

}  // namespace fanfold
