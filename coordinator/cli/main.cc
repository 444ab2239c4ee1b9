// The `fanfold` command: parses the command line into one subcommand's
// options, runs it, and maps its outcome to the exit status
// (common/base/exit_codes.h). All work lives in the command modules.
// Under `mpirun -np N` (N > 1) rank 0 does exactly that with an MPI session
// open, and every other rank is a node agent (docs/mpi.md); the session
// object releases the agents on every way out of rank 0.
#include <iostream>
#include <memory>

#include "common/base/exit_codes.h"
#include "common/transport/launcher_environment.h"
#include "common/transport/mpi_node_agent.h"
#include "common/transport/mpi_session.h"
#include "coordinator/cli/cli.h"
#include "coordinator/run/transport_factory.h"

namespace {

// Rank 0's whole life: the command line, as without MPI.
int RunCommandLine(int argc, char** argv) {
  fanfold::CliOutcome cli = fanfold::ParseAndRun(argc, argv);
  if (!cli.outcome.status.ok()) {
    std::cerr << "fanfold: error: " << cli.outcome.status.message() << "\n";
    if (cli.usage_hint) std::cerr << "fanfold: see 'fanfold --help' or 'fanfold <command> --help'\n";
    return cli.usage_hint ? fanfold::kExitUsage : fanfold::ExitCodeFor(cli.outcome.status);
  }
  if (cli.exit_zero_early) return fanfold::kExitOk;
  return cli.outcome.shards_failed ? fanfold::kExitShardsFailed : fanfold::kExitOk;
}

}  // namespace

int main(int argc, char** argv) {
  using namespace fanfold;
  const LauncherEnvironment launcher = ReadLauncherEnvironment();
  if (!launcher.launched || launcher.size < 2) return RunCommandLine(argc, argv);
  if (!MpiSession::Available()) {
    if (launcher.rank == 0)
      std::cerr << "fanfold: error: started by an MPI launcher with " << launcher.size
                << " ranks, but this fanfold was built without MPI (rebuild with Open MPI installed, "
                   "cmake -DFANFOLD_MPI=ON), or run it without mpirun\n";
    return kExitUsage;
  }
  Result<std::unique_ptr<MpiSession>> session = MpiSession::Start();
  if (!session.ok()) {
    std::cerr << "fanfold: error: " << session.status().message() << "\n";
    return ExitCodeFor(session.status());
  }
  if ((*session)->rank() == 0) return RunCommandLine(argc, argv);  // the session's destructor releases the agents
  Status s = RunNodeAgent(**session, WorkerBinaryPath());
  if (!s.ok()) {
    std::cerr << "fanfold: node agent rank " << (*session)->rank() << ": " << s.message() << "\n";
    return ExitCodeFor(s);
  }
  return kExitOk;
}
