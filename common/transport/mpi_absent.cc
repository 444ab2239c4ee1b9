// The MPI entry points of a fanfold built without MPI (FANFOLD_MPI=OFF or
// no MPI found): every one says so. Compiled instead of mpi_*.cc.
#include "common/transport/mpi_node_agent.h"
#include "common/transport/mpi_session.h"
#include "common/transport/mpi_transport.h"

namespace fanfold {
namespace {

Status NotBuilt() {
  return Status::InvalidArgument(
      "this fanfold was built without MPI; rebuild with Open MPI installed (cmake -DFANFOLD_MPI=ON)");
}

}  // namespace

bool MpiSession::Available() { return false; }
Result<std::unique_ptr<MpiSession>> MpiSession::Start() { return NotBuilt(); }
MpiSession* MpiSession::Active() { return nullptr; }
MpiSession::~MpiSession() = default;
void MpiSession::ReleaseAgents() {}

Result<std::unique_ptr<Transport>> MpiTransport::Create(MpiSession&, const MpiTransportOptions&) { return NotBuilt(); }

Status RunNodeAgent(MpiSession&, const Result<std::string>&) { return NotBuilt(); }

}  // namespace fanfold
