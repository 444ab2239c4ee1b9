#include "common/transport/mpi_transport.h"

#include <algorithm>
#include <chrono>
#include <thread>

#include "common/port/clock.h"
#include "common/port/signal_guard.h"
#include "common/transport/mpi_wire.h"

namespace fanfold {
namespace {

// How long Shutdown waits for the agents to stop their workers (each
// ShmTransport gives its workers 2 s before SIGKILL).
constexpr uint64_t kStopWaitNs = 10'000'000'000;

Status AgentFailure(int rank, const std::string& bytes) {
  FailedMessage f;
  if (Status s = DecodeFailed(bytes, &f); !s.ok()) return s;
  return Status::IoError("node agent rank " + std::to_string(rank) + " on " + f.host + ": " + f.message);
}

}  // namespace

Result<std::unique_ptr<Transport>> MpiTransport::Create(MpiSession& session, const MpiTransportOptions& options) {
  if (session.rank() != 0 || session.size() < 2) return Status::Internal("MpiTransport needs rank 0 of 2 or more");
  HelloMessage hello;
  hello.workers = options.workers_per_agent;
  hello.spill_dir = options.spill_dir;
  hello.worker_args = options.worker_args;
  const std::string bytes = EncodeHello(hello);
  for (int r = 1; r < session.size(); ++r) FF_RETURN_IF_ERROR(SendMessage(r, kTagHello, bytes));

  std::unique_ptr<MpiTransport> t(new MpiTransport());
  std::vector<uint32_t> counts(static_cast<size_t>(session.size()), 0);
  t->hosts_.assign(static_cast<size_t>(session.size()), "");
  // Sized now, so that a failed start still stops every agent (destructor).
  t->first_slot_.assign(static_cast<size_t>(session.size()), 0);
  int missing = session.size() - 1;
  const uint64_t deadline = MonotonicNanos() + static_cast<uint64_t>(options.ready_timeout_ms) * 1'000'000;
  std::string got;
  while (missing > 0) {
    int from = 0, tag = 0;
    if (!PollMessage(-1, &from, &tag, &got)) {
      if (MonotonicNanos() > deadline)
        return Status::IoError(std::to_string(missing) + " node agent(s) did not report ready within " +
                               std::to_string(options.ready_timeout_ms) + " ms");
      std::this_thread::sleep_for(std::chrono::milliseconds(1));
      continue;
    }
    if (tag == kTagFailed) return AgentFailure(from, got);
    if (tag != kTagReady || from < 1 || counts[static_cast<size_t>(from)] != 0)
      return Status::Internal("unexpected message (tag " + std::to_string(tag) + ") from rank " +
                              std::to_string(from) + " while agents start");
    ReadyMessage ready;
    FF_RETURN_IF_ERROR(DecodeReady(got, &ready));
    if (ready.workers == 0) return Status::Internal("node agent rank " + std::to_string(from) + " has no workers");
    counts[static_cast<size_t>(from)] = ready.workers;
    t->hosts_[static_cast<size_t>(from)] = ready.host;
    --missing;
  }
  for (int r = 1; r < session.size(); ++r) {
    t->first_slot_[static_cast<size_t>(r)] = static_cast<int>(t->slots_.size());
    for (uint32_t i = 0; i < counts[static_cast<size_t>(r)]; ++i) {
      Slot s;
      s.rank = r;
      s.local = i;
      t->slots_.push_back(s);
    }
  }
  std::unique_ptr<Transport> base = std::move(t);
  return base;
}

int MpiTransport::worker_count() const { return static_cast<int>(slots_.size()); }

bool MpiTransport::idle(int w) const { return slots_[static_cast<size_t>(w)].held.empty(); }

int MpiTransport::room(int w) const {
  return std::max(0, kQueueDepth - static_cast<int>(slots_[static_cast<size_t>(w)].held.size()));
}

Status MpiTransport::Assign(int w, const ShardTask& task) {
  Slot& slot = slots_[static_cast<size_t>(w)];
  if (static_cast<int>(slot.held.size()) >= kQueueDepth) return Status::Internal("Assign to a full MPI worker slot");
  TaskMessage m;
  m.slot = slot.local;
  m.task = task;
  FF_RETURN_IF_ERROR(SendMessage(slot.rank, kTagTask, EncodeTask(m)));
  slot.held.push_back(task.index);
  return Status::Ok();
}

bool MpiTransport::Running(int w, uint32_t* shard, uint64_t* since_ns) const {
  const Slot& slot = slots_[static_cast<size_t>(w)];
  if (!slot.running) return false;
  *shard = slot.running_shard;
  *since_ns = slot.since_ns;
  return true;
}

Result<bool> MpiTransport::Handle(int from, int tag, const std::string& bytes, TransportEvent* event) {
  if (from < 1 || static_cast<size_t>(from) >= first_slot_.size())
    return Status::Internal("message from unknown rank " + std::to_string(from));
  const uint32_t count = static_cast<uint32_t>(
      (static_cast<size_t>(from) + 1 < first_slot_.size() ? first_slot_[static_cast<size_t>(from) + 1]
                                                          : static_cast<int>(slots_.size())) -
      first_slot_[static_cast<size_t>(from)]);
  auto slot_of = [&](uint32_t local) -> Slot* {
    return local < count ? &slots_[static_cast<size_t>(first_slot_[static_cast<size_t>(from)]) + local] : nullptr;
  };
  switch (tag) {
    case kTagStarted: {
      StartedMessage m;
      FF_RETURN_IF_ERROR(DecodeStarted(bytes, &m));
      Slot* s = slot_of(m.slot);
      if (s == nullptr) return Status::Corrupt("started message for an unknown slot from rank " + std::to_string(from));
      // Only if still held: the shard's event may have overtaken nothing,
      // but a late "started" for a finished shard must not stick.
      if (std::find(s->held.begin(), s->held.end(), m.shard) != s->held.end()) {
        s->running = true;
        s->running_shard = m.shard;
        s->since_ns = m.since_ns;
      }
      return false;
    }
    case kTagEvent: {
      uint32_t local = 0;
      FF_RETURN_IF_ERROR(ReceiveEventRest(from, bytes, &local, event));
      Slot* s = slot_of(local);
      if (s == nullptr) return Status::Corrupt("event for an unknown slot from rank " + std::to_string(from));
      auto it = std::find(s->held.begin(), s->held.end(), event->shard);
      if (it == s->held.end())
        return Status::Corrupt("rank " + std::to_string(from) + " reported shard " + std::to_string(event->shard) +
                               " that its slot does not hold");
      s->held.erase(it);
      if (s->running && s->running_shard == event->shard) s->running = false;
      event->worker = first_slot_[static_cast<size_t>(from)] + static_cast<int>(local);
      return true;
    }
    case kTagFailed:
      return AgentFailure(from, bytes);
    default:
      return Status::Internal("unexpected message (tag " + std::to_string(tag) + ") from rank " +
                              std::to_string(from));
  }
}

Status MpiTransport::Wait(int timeout_ms, TransportEvent* event, bool* got) {
  *got = false;
  const uint64_t deadline = MonotonicNanos() + static_cast<uint64_t>(std::max(0, timeout_ms)) * 1'000'000;
  std::string bytes;
  for (;;) {
    int from = 0, tag = 0;
    if (PollMessage(-1, &from, &tag, &bytes)) {
      Result<bool> filled = Handle(from, tag, bytes, event);
      if (!filled.ok()) return filled.status();
      last_message_ns_ = MonotonicNanos();
      if (*filled) {
        *got = true;
        return Status::Ok();
      }
      continue;
    }
    if (MonotonicNanos() >= deadline) return Status::Ok();
    SleepBetweenPolls(last_message_ns_);
  }
}

Status MpiTransport::Abort(int w) {
  const Slot& slot = slots_[static_cast<size_t>(w)];
  return SendMessage(slot.rank, kTagAbort, EncodeSlot(slot.local));
}

void MpiTransport::Shutdown() {
  if (shut_down_) return;
  shut_down_ = true;
  // After SIGINT/SIGTERM (mpirun ending the job) nobody may answer.
  if (SignalGuard::interrupted()) return;
  const int ranks = static_cast<int>(first_slot_.size());
  for (int r = 1; r < ranks; ++r)
    if (!SendMessage(r, kTagStop, "").ok()) return;
  int missing = ranks - 1;
  const uint64_t deadline = MonotonicNanos() + kStopWaitNs;
  std::string bytes;
  while (missing > 0 && MonotonicNanos() < deadline && !SignalGuard::interrupted()) {
    int from = 0, tag = 0;
    if (!PollMessage(-1, &from, &tag, &bytes)) {
      std::this_thread::sleep_for(std::chrono::milliseconds(1));
      continue;
    }
    if (tag == kTagEvent) {  // results nobody waits for any more: drain their pieces
      uint32_t local = 0;
      TransportEvent ev;
      (void)ReceiveEventRest(from, bytes, &local, &ev);
    } else if (tag == kTagStopped) {
      --missing;
    }
  }
}

std::string MpiTransport::worker_node(int w) const {
  if (w < 0 || static_cast<size_t>(w) >= slots_.size()) return "";
  const Slot& slot = slots_[static_cast<size_t>(w)];
  return "rank " + std::to_string(slot.rank) + " on " + hosts_[static_cast<size_t>(slot.rank)];
}

}  // namespace fanfold
