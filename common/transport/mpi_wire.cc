#include "common/transport/mpi_wire.h"

#include <mpi.h>

#include <algorithm>
#include <cstdlib>
#include <chrono>
#include <thread>

#include "common/base/byte_io.h"
#include "common/port/clock.h"

namespace fanfold {
namespace {

Status Truncated(const char* what) {
  return Status::Corrupt(std::string("a ") + what + " message from another rank is cut short or malformed");
}

std::string ReadStr(ByteReader& r) { return std::string(r.Str()); }

}  // namespace

std::string EncodeHello(const HelloMessage& m) {
  std::string out;
  ByteWriter w(&out);
  w.U32(m.workers);
  w.Str(m.spill_dir);
  w.Varint(m.worker_args.size());
  for (const std::string& a : m.worker_args) w.Str(a);
  return out;
}

Status DecodeHello(const std::string& bytes, HelloMessage* m) {
  ByteReader r(bytes);
  m->workers = r.U32();
  m->spill_dir = ReadStr(r);
  const uint64_t n = r.Varint();
  m->worker_args.clear();
  for (uint64_t i = 0; i < n && r.ok() && i < 64; ++i) m->worker_args.push_back(ReadStr(r));
  return r.ok() && r.at_end() && n < 64 ? Status::Ok() : Truncated("hello");
}

std::string EncodeReady(const ReadyMessage& m) {
  std::string out;
  ByteWriter w(&out);
  w.U32(m.workers);
  w.Str(m.host);
  return out;
}

Status DecodeReady(const std::string& bytes, ReadyMessage* m) {
  ByteReader r(bytes);
  m->workers = r.U32();
  m->host = ReadStr(r);
  return r.ok() && r.at_end() ? Status::Ok() : Truncated("ready");
}

std::string EncodeFailed(const FailedMessage& m) {
  std::string out;
  ByteWriter w(&out);
  w.Str(m.host);
  w.Str(m.message);
  return out;
}

Status DecodeFailed(const std::string& bytes, FailedMessage* m) {
  ByteReader r(bytes);
  m->host = ReadStr(r);
  m->message = ReadStr(r);
  return r.ok() && r.at_end() ? Status::Ok() : Truncated("failure");
}

std::string EncodeTask(const TaskMessage& m) {
  std::string out;
  ByteWriter w(&out);
  w.U32(m.slot);
  w.U32(m.task.index);
  w.U32(m.task.attempt);
  w.U64(m.task.offset);
  w.U64(m.task.length);
  w.U8(static_cast<uint8_t>(m.task.compression));
  w.U64(m.task.file_size);
  w.I64(m.task.mtime_ns);
  w.Str(m.task.path);
  return out;
}

Status DecodeTask(const std::string& bytes, TaskMessage* m) {
  ByteReader r(bytes);
  m->slot = r.U32();
  m->task.index = r.U32();
  m->task.attempt = r.U32();
  m->task.offset = r.U64();
  m->task.length = r.U64();
  m->task.compression = static_cast<Compression>(r.U8());
  m->task.file_size = r.U64();
  m->task.mtime_ns = r.I64();
  m->task.path = ReadStr(r);
  return r.ok() && r.at_end() ? Status::Ok() : Truncated("task");
}

std::string EncodeSlot(uint32_t slot) {
  std::string out;
  ByteWriter(&out).U32(slot);
  return out;
}

Status DecodeSlot(const std::string& bytes, uint32_t* slot) {
  ByteReader r(bytes);
  *slot = r.U32();
  return r.ok() && r.at_end() ? Status::Ok() : Truncated("abort");
}

std::string EncodeStarted(const StartedMessage& m) {
  std::string out;
  ByteWriter w(&out);
  w.U32(m.slot);
  w.U32(m.shard);
  w.U64(m.since_ns);
  return out;
}

Status DecodeStarted(const std::string& bytes, StartedMessage* m) {
  ByteReader r(bytes);
  m->slot = r.U32();
  m->shard = r.U32();
  m->since_ns = r.U64();
  return r.ok() && r.at_end() ? Status::Ok() : Truncated("started");
}

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
  std::string out;
  ByteWriter w(&out);
  w.U8(static_cast<uint8_t>(ev.kind));
  w.U32(slot);
  w.U32(ev.shard);
  w.U8(ev.aborted ? 1 : 0);
  w.U64(ev.start_ns);
  w.U64(ev.end_ns);
  w.Str(ev.message);
  w.U64(ev.partial.size());
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
  ByteReader r(bytes);
  const uint8_t kind = r.U8();
  *slot = r.U32();
  ev->shard = r.U32();
  ev->aborted = r.U8() != 0;
  ev->start_ns = r.U64();
  ev->end_ns = r.U64();
  ev->message = ReadStr(r);
  const uint64_t total = r.U64();
  if (!r.ok() || kind > static_cast<uint8_t>(TransportEvent::Kind::kReturned) || r.remaining() > total)
    return Truncated("event");
  ev->kind = static_cast<TransportEvent::Kind>(kind);
  ev->partial.clear();
  ev->partial.reserve(total);
  ev->partial.append(bytes.data() + (bytes.size() - r.remaining()), r.remaining());
  while (ev->partial.size() < total) {
    MPI_Status st;
    MPI_Probe(from, kTagPiece, MPI_COMM_WORLD, &st);
    int count = 0;
    MPI_Get_count(&st, MPI_BYTE, &count);
    if (count <= 0 || ev->partial.size() + static_cast<uint64_t>(count) > total) return Truncated("piece");
    const size_t at = ev->partial.size();
    ev->partial.resize(at + static_cast<size_t>(count));
    MPI_Recv(ev->partial.data() + at, count, MPI_BYTE, from, kTagPiece, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
  }
  return Status::Ok();
}

}  // namespace fanfold
