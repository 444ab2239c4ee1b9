// The command-line front end of `fanfold`: builds a CLI11 parser from the
// table of subcommands (coordinator/cli/subcommand_table.h), parses, checks
// the chosen subcommand's flags and runs it. Every usage error, CLI11's or a
// flag check's, leaves through one path (usage_hint). ParseAndRun never exits
// the process; main() maps the outcome to the exit status. Main thread only.
#pragma once

#include "coordinator/cli/run_command.h"

namespace fanfold {

struct CliOutcome {
  CommandOutcome outcome;
  bool usage_hint = false;       // a usage error: print the --help hint
  bool exit_zero_early = false;  // --help or --version was printed
};

CliOutcome ParseAndRun(int argc, char** argv);

}  // namespace fanfold
