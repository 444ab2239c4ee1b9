// MpiSession: fanfold's one MPI session (MPI_Init ... MPI_Finalize) when
// `mpirun -np N fanfold ...` started it (docs/mpi.md). Rank 0 runs the
// command as usual, with MpiTransport (common/transport/mpi_transport.h)
// when the command runs shards; every other rank is a node agent
// (common/transport/mpi_node_agent.h). Whatever way rank 0's command ends —
// a finished run, a usage or job-file error, `check` — the session's
// destructor releases the agents (quit, then waits for their goodbye while
// draining what they still send) and finalizes MPI, so no rank is left
// waiting. After a SIGINT/SIGTERM (mpirun ending the job because a rank
// died) it does not wait: mpirun is already taking the job down.
// Built from common/transport/mpi_session.cc with MPI and mpi_absent.cc
// without; one per process, main thread only.
#pragma once

#include <memory>
#include <string>

#include "common/base/status.h"

namespace fanfold {

class MpiSession {
 public:
  // True iff this fanfold was built with MPI.
  static bool Available();
  // MPI_Init. REQUIRES: no other session alive.
  static Result<std::unique_ptr<MpiSession>> Start();
  // The live session, or nullptr (no MPI launch, or after destruction).
  static MpiSession* Active();

  MpiSession(const MpiSession&) = delete;
  MpiSession& operator=(const MpiSession&) = delete;
  // Rank 0: ReleaseAgents(). Every rank: MPI_Finalize.
  ~MpiSession();

  int rank() const { return rank_; }
  int size() const { return size_; }
  // This node's name (MPI_Get_processor_name).
  const std::string& host() const { return host_; }
  // Rank 0: tells every agent to quit and waits (bounded) for each one's
  // goodbye, discarding whatever else they still send. Idempotent.
  void ReleaseAgents();

 private:
  MpiSession() = default;
  int rank_ = 0;
  int size_ = 1;
  std::string host_;
  bool released_ = false;
  bool can_finalize_ = true;  // false: some rank is gone or unreachable
};

}  // namespace fanfold
