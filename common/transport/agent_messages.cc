#include "common/transport/agent_messages.h"

#include "common/base/byte_io.h"

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
  w.U64(m.task.table_bytes);
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
  m->task.table_bytes = r.U64();
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

std::string EncodeEventHeader(uint32_t slot, const TransportEvent& ev) {
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
  return out;
}

Status DecodeEventHeader(const std::string& bytes, uint32_t* slot, TransportEvent* ev, uint64_t* total,
                         size_t* header_bytes) {
  ByteReader r(bytes);
  const uint8_t kind = r.U8();
  *slot = r.U32();
  ev->shard = r.U32();
  ev->aborted = r.U8() != 0;
  ev->start_ns = r.U64();
  ev->end_ns = r.U64();
  ev->message = ReadStr(r);
  *total = r.U64();
  if (!r.ok() || kind > static_cast<uint8_t>(TransportEvent::Kind::kReturned) || r.remaining() > *total)
    return Truncated("event");
  ev->kind = static_cast<TransportEvent::Kind>(kind);
  ev->partial.clear();
  *header_bytes = bytes.size() - r.remaining();
  return Status::Ok();
}

}  // namespace fanfold
