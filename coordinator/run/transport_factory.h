// MakeTransport: picks and builds the Transport for a run — worker processes
// over shared memory normally, the in-process one for `--in-process`, the
// MPI node agents' workers when `mpirun` started fanfold (docs/mpi.md).
// The one place the coordinator names a concrete transport.
#pragma once

#include <memory>
#include <string>

#include "common/job/plan.h"
#include "common/base/status.h"
#include "coordinator/run/run_options.h"
#include "common/transport/transport.h"

namespace fanfold {

// The fanfold-worker program next to this fanfold (FANFOLD_WORKER_BINARY
// overrides it), or why there is none.
Result<std::string> WorkerBinaryPath();

// spill_dir: where partials too big for shared memory are written.
Result<std::unique_ptr<Transport>> MakeTransport(const Plan& plan, const RunOptions& options, int workers,
                                                 const std::string& spill_dir);

}  // namespace fanfold
