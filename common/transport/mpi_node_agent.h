// RunNodeAgent: what every MPI rank but 0 does (docs/mpi.md). It waits for
// rank 0's hello, starts a local pool of fanfold-worker processes over
// shared memory (ShmTransport) plus a SegmentGuardian for its segment,
// reports ready, then relays: tasks and aborts in; "started" notes and
// every TransportEvent (a finished shard's partial, in pieces when big)
// out. Before a task reaches a worker it checks that the shard's file opens
// and has the size and mtime rank 0 listed; if not, the shard fails with a
// message naming the path, this node and both identities. A dying worker
// is replaced as on one machine; the agent goes on. A "stop" ends the pool
// (back to waiting for a hello: `scale` runs several pools); "quit" ends
// the agent. Polls with 1 ms sleeps; never spins.
#pragma once

#include <string>

#include "common/base/status.h"
#include "common/transport/mpi_session.h"

namespace fanfold {

// worker_binary: the fanfold-worker program on this node, or the error
// that says why there is none (reported to rank 0 at the hello). Returns
// when rank 0 says quit; Ok unless MPI itself failed.
Status RunNodeAgent(MpiSession& session, const Result<std::string>& worker_binary);

}  // namespace fanfold
