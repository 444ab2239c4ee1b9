// The `fanfold` command: parses the command line into one subcommand's
// options, runs it, and maps its outcome to the exit status
// (common/base/exit_codes.h). All work lives in the command modules.
#include <iostream>

#include "common/base/exit_codes.h"
#include "coordinator/cli/cli.h"

int main(int argc, char** argv) {
  fanfold::CliOutcome cli = fanfold::ParseAndRun(argc, argv);
  if (!cli.outcome.status.ok()) {
    std::cerr << "fanfold: error: " << cli.outcome.status.message() << "\n";
    if (cli.usage_hint) std::cerr << "fanfold: see 'fanfold --help' or 'fanfold <command> --help'\n";
    return cli.usage_hint ? fanfold::kExitUsage : fanfold::ExitCodeFor(cli.outcome.status);
  }
  if (cli.exit_zero_early) return fanfold::kExitOk;
  return cli.outcome.shards_failed ? fanfold::kExitShardsFailed : fanfold::kExitOk;
}
