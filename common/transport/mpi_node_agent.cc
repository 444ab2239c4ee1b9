#include "common/transport/mpi_node_agent.h"

#include <chrono>
#include <deque>
#include <memory>
#include <thread>
#include <vector>

#include "common/port/clock.h"
#include "common/port/files/file_identity.h"
#include "common/port/segment_guardian.h"
#include "common/transport/mpi_wire.h"
#include "common/transport/shm_transport.h"

namespace fanfold {
namespace {

enum class Next { kHello, kQuit };

std::string Identity(uint64_t size, int64_t mtime_ns) {
  return std::to_string(size) + " bytes, mtime " + std::to_string(mtime_ns) + " ns";
}

// "" iff the shard's file is there and is the one rank 0 listed.
std::string IdentityProblem(const ShardTask& task, const std::string& host) {
  if (task.file_size == 0 && task.mtime_ns == 0) return "";
  FileIdentity seen;
  if (OsError e = IdentifyFile(task.path, &seen); !e.ok())
    return e.ToStatus("open", task.path).message() + " on node " + host;
  if (seen.size == task.file_size && seen.mtime_ns == task.mtime_ns) return "";
  return "shard file '" + task.path + "' on node " + host + " is not the file the coordinator listed: it has " +
         Identity(seen.size, seen.mtime_ns) + ", the coordinator saw " + Identity(task.file_size, task.mtime_ns);
}

class Agent {
 public:
  Agent(MpiSession& session, const Result<std::string>& binary) : session_(session), binary_(binary) {}

  Status Loop() {
    for (;;) {
      int tag = 0;
      std::string bytes;
      WaitFromRankZero(&tag, &bytes);
      if (tag == kTagQuit) break;
      if (tag == kTagStop) {
        FF_RETURN_IF_ERROR(SendMessage(0, kTagStopped, ""));
        continue;
      }
      if (tag != kTagHello) continue;  // stale tasks of a pool that failed
      HelloMessage hello;
      Status s = DecodeHello(bytes, &hello);
      Result<Next> next = s.ok() ? Serve(hello) : Result<Next>(s);
      if (!next.ok()) return next.status();
      if (*next == Next::kQuit) break;
    }
    return SendMessage(0, kTagBye, "");
  }

 private:
  void WaitFromRankZero(int* tag, std::string* bytes) {
    int from = 0;
    while (!PollMessage(0, &from, tag, bytes)) std::this_thread::sleep_for(std::chrono::milliseconds(1));
  }

  // After a failure reported to rank 0: only stop or quit can follow.
  Result<Next> AfterFailure(const std::string& message) {
    FF_RETURN_IF_ERROR(SendMessage(0, kTagFailed, EncodeFailed({session_.host(), message})));
    for (;;) {
      int tag = 0;
      std::string bytes;
      WaitFromRankZero(&tag, &bytes);
      if (tag == kTagQuit) return Next::kQuit;
      if (tag == kTagStop) {
        FF_RETURN_IF_ERROR(SendMessage(0, kTagStopped, ""));
        return Next::kHello;
      }
    }
  }

  Result<Next> Serve(const HelloMessage& hello) {
    if (!binary_.ok()) return AfterFailure(binary_.status().message());
    ShmTransportOptions o;
    o.worker_binary = binary_.value();
    o.worker_args = hello.worker_args;
    o.worker_count = hello.workers > 0 ? static_cast<int>(hello.workers)
                                       : static_cast<int>(std::max(1u, std::thread::hardware_concurrency()));
    o.spill_dir = hello.spill_dir;
    Result<std::unique_ptr<ShmTransport>> local = ShmTransport::Create(o);
    if (!local.ok()) return AfterFailure(local.status().message());
    Result<std::unique_ptr<SegmentGuardian>> guardian = SegmentGuardian::Start((*local)->segment_name());
    if (!guardian.ok()) return AfterFailure(guardian.status().message());
    ShmTransport& pool = **local;
    const int n = pool.worker_count();
    FF_RETURN_IF_ERROR(SendMessage(0, kTagReady, EncodeReady({static_cast<uint32_t>(n), session_.host()})));
    std::vector<std::deque<ShardTask>> backlog(static_cast<size_t>(n));
    std::vector<std::pair<uint32_t, uint64_t>> told(static_cast<size_t>(n), {UINT32_MAX, 0});
    uint64_t last_message_ns = 0;  // monotonic: last task in or event out
    for (;;) {
      bool busy = MonotonicNanos() - last_message_ns < kBusyWindowNs;
      int from = 0, tag = 0;
      std::string bytes;
      while (PollMessage(0, &from, &tag, &bytes)) {
        busy = true;
        last_message_ns = MonotonicNanos();
        if (tag == kTagQuit || tag == kTagStop) {
          pool.Shutdown();
          if (tag == kTagQuit) return Next::kQuit;
          FF_RETURN_IF_ERROR(SendMessage(0, kTagStopped, ""));
          return Next::kHello;
        }
        if (tag == kTagAbort) {
          uint32_t slot = 0;
          if (DecodeSlot(bytes, &slot).ok() && slot < static_cast<uint32_t>(n))
            FF_RETURN_IF_ERROR(pool.Abort(static_cast<int>(slot)));
          continue;
        }
        if (tag != kTagTask) continue;
        TaskMessage m;
        if (Status s = DecodeTask(bytes, &m); !s.ok() || m.slot >= static_cast<uint32_t>(n))
          return AfterFailure(s.ok() ? "task for an unknown worker slot" : s.message());
        if (std::string problem = IdentityProblem(m.task, session_.host()); !problem.empty()) {
          TransportEvent ev;
          ev.kind = TransportEvent::Kind::kFailed;
          ev.shard = m.task.index;
          ev.message = problem;
          ev.start_ns = ev.end_ns = WallNanos();
          FF_RETURN_IF_ERROR(SendEvent(m.slot, ev, piece_bytes_));
          continue;
        }
        backlog[m.slot].push_back(std::move(m.task));
      }
      for (int w = 0; w < n; ++w) {
        std::deque<ShardTask>& b = backlog[static_cast<size_t>(w)];
        while (!b.empty() && pool.room(w) > 0) {
          if (Status s = pool.Assign(w, b.front()); !s.ok()) return AfterFailure(s.message());
          b.pop_front();
        }
      }
      TransportEvent ev;
      bool got = false;
      if (Status s = pool.Wait(busy ? 0 : 1, &ev, &got); !s.ok()) return AfterFailure(s.message());
      if (got) {
        FF_RETURN_IF_ERROR(SendEvent(static_cast<uint32_t>(ev.worker), ev, piece_bytes_));
        last_message_ns = MonotonicNanos();
      }
      for (int w = 0; w < n; ++w) {
        uint32_t shard = 0;
        uint64_t since = 0;
        if (!pool.Running(w, &shard, &since)) continue;
        auto& last = told[static_cast<size_t>(w)];
        if (last.first == shard && last.second == since) continue;
        last = {shard, since};
        FF_RETURN_IF_ERROR(SendMessage(0, kTagStarted, EncodeStarted({static_cast<uint32_t>(w), shard, since})));
      }
      if (busy && !got) SleepBetweenPolls(last_message_ns);
    }
  }

  MpiSession& session_;
  const Result<std::string>& binary_;
  const uint64_t piece_bytes_ = PieceBytesFromEnvironment();
};

}  // namespace

Status RunNodeAgent(MpiSession& session, const Result<std::string>& worker_binary) {
  Agent agent(session, worker_binary);
  return agent.Loop();
}

}  // namespace fanfold
