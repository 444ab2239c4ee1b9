// The command-line front end of `fanfold`: a table of subcommands (run,
// check, ...), each with its options struct, parsed with CLI11. Numeric
// flags go through checked parsers with precise messages. ParseAndRun only
// parses and dispatches; it never exits the process.
#pragma once

#include "coordinator/cli/run_command.h"

namespace fanfold {

struct CliOutcome {
  CommandOutcome outcome;
  bool usage_hint = false;       // a usage error: print the --help hint
  bool exit_zero_early = false;  // --help or --version was printed
};

CliOutcome ParseAndRun(int argc, char** argv);

// Parses a worker count: a whole number 1..1024. Returns false iff invalid.
bool ParseWorkerCount(const std::string& text, int* out);

}  // namespace fanfold
