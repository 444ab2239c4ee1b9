#include "common/transport/mpi_wire.h"

#include <mpi.h>

#include <algorithm>
#include <cstdlib>
#include <chrono>
#include <thread>

#include "common/port/clock.h"

namespace fanfold {

void SleepBetweenPolls(uint64_t last_message_ns) {
  const bool busy = MonotonicNanos() - last_message_ns < kBusyWindowNs;
  std::this_thread::sleep_for(busy ? std::chrono::microseconds(20) : std::chrono::microseconds(1000));
}

Status SendMessage(int dest, int tag, const std::string& bytes) {
  if (bytes.size() > static_cast<size_t>(INT32_MAX)) return Status::Internal("MPI message too large");
  int rc = MPI_Send(bytes.data(), static_cast<int>(bytes.size()), MPI_BYTE, dest, tag, MPI_COMM_WORLD);
  if (rc != MPI_SUCCESS) return Status::IoError("MPI_Send to rank " + std::to_string(dest) + " failed");
  return Status::Ok();
}

bool PollMessage(int source, int* from, int* tag, std::string* bytes) {
  int flag = 0;
  MPI_Status st;
  MPI_Iprobe(source < 0 ? MPI_ANY_SOURCE : source, MPI_ANY_TAG, MPI_COMM_WORLD, &flag, &st);
  if (!flag) return false;
  int count = 0;
  MPI_Get_count(&st, MPI_BYTE, &count);
  bytes->resize(static_cast<size_t>(count));
  MPI_Recv(bytes->data(), count, MPI_BYTE, st.MPI_SOURCE, st.MPI_TAG, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
  *from = st.MPI_SOURCE;
  *tag = st.MPI_TAG;
  return true;
}

uint64_t PieceBytesFromEnvironment() {
  const char* v = std::getenv("FANFOLD_TEST_ONLY_MPI_PIECE_BYTES");
  if (v == nullptr || *v == '\0') return kMpiPieceBytes;
  char* end = nullptr;
  const unsigned long long n = std::strtoull(v, &end, 10);
  return (*end == '\0' && n >= 1 && n <= kMpiPieceBytes) ? n : kMpiPieceBytes;
}

Status SendEvent(uint32_t slot, const TransportEvent& ev, uint64_t piece_bytes) {
  std::string out = EncodeEventHeader(slot, ev);
  const size_t first = std::min<size_t>(ev.partial.size(), piece_bytes);
  out.append(ev.partial.data(), first);
  FF_RETURN_IF_ERROR(SendMessage(0, kTagEvent, out));
  for (size_t at = first; at < ev.partial.size(); at += piece_bytes) {
    const size_t n = std::min<size_t>(ev.partial.size() - at, piece_bytes);
    int rc = MPI_Send(ev.partial.data() + at, static_cast<int>(n), MPI_BYTE, 0, kTagPiece, MPI_COMM_WORLD);
    if (rc != MPI_SUCCESS) return Status::IoError("MPI_Send of a partial's piece to rank 0 failed");
  }
  return Status::Ok();
}

Status ReceiveEventRest(int from, const std::string& bytes, uint32_t* slot, TransportEvent* ev) {
  uint64_t total = 0;
  size_t header = 0;
  FF_RETURN_IF_ERROR(DecodeEventHeader(bytes, slot, ev, &total, &header));
  ev->partial.reserve(total);
  ev->partial.append(bytes.data() + header, bytes.size() - header);
  while (ev->partial.size() < total) {
    MPI_Status st;
    MPI_Probe(from, kTagPiece, MPI_COMM_WORLD, &st);
    int count = 0;
    MPI_Get_count(&st, MPI_BYTE, &count);
    if (count <= 0 || ev->partial.size() + static_cast<uint64_t>(count) > total) return Status::Corrupt("a piece of a partial from rank " + std::to_string(from) + " does not fit its length");
    const size_t at = ev->partial.size();
    ev->partial.resize(at + static_cast<size_t>(count));
    MPI_Recv(ev->partial.data() + at, count, MPI_BYTE, from, kTagPiece, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
  }
  return Status::Ok();
}

}  // namespace fanfold
