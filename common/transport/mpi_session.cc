#include "common/transport/mpi_session.h"

#include <mpi.h>

#include <chrono>
#include <thread>
#include <vector>

#include "common/port/clock.h"
#include "common/port/signal_guard.h"
#include "common/transport/mpi_wire.h"

namespace fanfold {
namespace {

MpiSession* g_active = nullptr;

// How long rank 0 waits for the agents' goodbyes: they first stop their
// workers (ShmTransport's grace is 2 s).
constexpr uint64_t kReleaseWaitNs = 10'000'000'000;

}  // namespace

bool MpiSession::Available() { return true; }

Result<std::unique_ptr<MpiSession>> MpiSession::Start() {
  if (g_active != nullptr) return Status::Internal("MPI session started twice");
  int initialized = 0;
  MPI_Initialized(&initialized);
  if (!initialized && MPI_Init(nullptr, nullptr) != MPI_SUCCESS) return Status::IoError("MPI_Init failed");
  std::unique_ptr<MpiSession> s(new MpiSession());
  MPI_Comm_rank(MPI_COMM_WORLD, &s->rank_);
  MPI_Comm_size(MPI_COMM_WORLD, &s->size_);
  char name[MPI_MAX_PROCESSOR_NAME] = {};
  int length = 0;
  MPI_Get_processor_name(name, &length);
  s->host_.assign(name, static_cast<size_t>(length));
  g_active = s.get();
  return s;
}

MpiSession* MpiSession::Active() { return g_active; }

void MpiSession::ReleaseAgents() {
  if (released_ || rank_ != 0) return;
  released_ = true;
  // A dead rank means mpirun is ending the job (it sent us SIGTERM): waiting
  // for goodbyes or in MPI_Finalize could only hang until its SIGKILL.
  // Either way each living agent is told to quit (a send that cannot block).
  std::vector<MPI_Request> quits(static_cast<size_t>(size_ - 1), MPI_REQUEST_NULL);
  for (int r = 1; r < size_; ++r)
    MPI_Isend(nullptr, 0, MPI_BYTE, r, kTagQuit, MPI_COMM_WORLD, &quits[static_cast<size_t>(r - 1)]);
  if (SignalGuard::interrupted()) {
    for (MPI_Request& q : quits) MPI_Request_free(&q);
    can_finalize_ = false;
    return;
  }
  std::vector<bool> bye(static_cast<size_t>(size_), false);
  int missing = size_ - 1;
  const uint64_t deadline = MonotonicNanos() + kReleaseWaitNs;
  std::string bytes;
  while (missing > 0 && MonotonicNanos() < deadline) {
    int from = 0, tag = 0;
    if (!PollMessage(-1, &from, &tag, &bytes)) {
      std::this_thread::sleep_for(std::chrono::milliseconds(1));
      continue;
    }
    if (tag == kTagEvent) {  // drain the partial's pieces too, then drop it
      uint32_t slot = 0;
      TransportEvent ev;
      (void)ReceiveEventRest(from, bytes, &slot, &ev);
    } else if (tag == kTagBye && from > 0 && from < size_ && !bye[static_cast<size_t>(from)]) {
      bye[static_cast<size_t>(from)] = true;
      --missing;
    }
  }
  if (missing == 0) MPI_Waitall(size_ - 1, quits.data(), MPI_STATUSES_IGNORE);
  else can_finalize_ = false;  // not every agent answered: finalizing would wait for them
}

MpiSession::~MpiSession() {
  g_active = nullptr;
  if (rank_ == 0) ReleaseAgents();
  // Finalizing waits for every rank; skip it when some could not be reached
  // (mpirun reports the missing finalize and ends the job anyway).
  if (can_finalize_) MPI_Finalize();
}

}  // namespace fanfold
