#include "common/transport/worker_loop.h"

#include <algorithm>
#include <charconv>
#include <chrono>
#include <cstring>
#include <deque>
#include <exception>

#include "common/input/byte_source.h"
#include "common/port/clock.h"
#include "common/port/process_control.h"
#include "common/transport/shm_layout.h"
#include "common/port/shm_segment.h"
#include "common/transport/spill_file.h"

namespace fanfold {
namespace {

// How long a worker sleeps on its work semaphore before it checks that the
// coordinator is still its parent: bounds how long an orphan outlives it
// where the parent-death signal is unavailable.
constexpr int kParentCheckMs = 200;

// A finished shard wakes the coordinator iff at most this many shards are
// still queued behind it (see ServeOne).
constexpr uint64_t kWakeWhenQueued = 1;

void Beat(ShmChannel& ch) {
  ch.heartbeat_ns.store(MonotonicNanos(), std::memory_order_relaxed);
  ch.heartbeat_count.fetch_add(1, std::memory_order_relaxed);
}

void SetFailed(ShmResult& r, std::string_view message) {
  r.status = kResultFailed;
  r.in_file = 0;
  r.offset = 0;
  r.length = 0;
  r.spill_name_length = 0;
  r.error_length = CopyBoundedText(message, r.error, kMaxErrorBytes);
}

// Reads the coordinator's task. REQUIRES: assign_seq was loaded with
// acquire and covers this task's seq.
Status ReadTask(const ShmTask& t, ShardTask* task) {
  if (t.path_length > kMaxPathBytes) {
    return Status::Corrupt("task path length " + std::to_string(t.path_length) +
                           " in the shared-memory channel exceeds " + std::to_string(kMaxPathBytes));
  }
  if (t.compression > static_cast<uint32_t>(Compression::kGzip)) {
    return Status::Corrupt("unknown compression " + std::to_string(t.compression) +
                           " in the shared-memory channel");
  }
  task->index = t.index;
  task->attempt = t.attempt;
  task->offset = t.offset;
  task->length = t.length;
  task->compression = static_cast<Compression>(t.compression);
  task->table_bytes = t.table_bytes;
  task->path.assign(t.path, t.path_length);
  return Status::Ok();
}

// Why a wait for the coordinator ended early.
enum class Stop { kNone, kQuit, kOrphaned };

class Server {
 public:
  Server(const ShmView& view, uint32_t slot, const std::string& segment, const ProcessFn& process,
         int coordinator)
      : view_(view), ch_(view.channel(slot)), work_(view.work_sem(slot)), slot_(slot),
        segment_(segment), process_(process), coordinator_(coordinator), spill_dir_(view.spill_dir()),
        area_(view.result_area(slot)), area_bytes_(view.result_area_bytes()) {}

  // Sleeps on the work semaphore once (bounded), then checks quit and the
  // parent. Spurious or stale wake-ups are fine: callers re-check the
  // sequence numbers, not the count.
  Stop Nap() {
    if (!SemWaitFor(work_, kParentCheckMs) && ParentPid() != coordinator_) return Stop::kOrphaned;
    Beat(ch_);
    return view_.header().quit.load(std::memory_order_acquire) != 0 ? Stop::kQuit : Stop::kNone;
  }

  // Serves assignment seq and publishes its result (done_seq = seq).
  Stop ServeOne(uint64_t seq) {
    ShmResult& r = ch_.results[seq % kTaskRingSlots];
    r.end_ns = 0;
    ch_.records_done.store(0, std::memory_order_relaxed);
    ch_.bytes_done.store(0, std::memory_order_relaxed);
    const uint64_t start_ns = WallNanos();
    ch_.started_ns.store(start_ns, std::memory_order_relaxed);
    ch_.started_seq.store(seq, std::memory_order_release);
    Stop stop = Stop::kNone;
    Status st = ReadTask(ch_.tasks[seq % kTaskRingSlots], &task_);
    if (!st.ok()) {
      SetFailed(r, st.message());
    } else {
      stop = Deliver(seq, r);
    }
    if (stop != Stop::kNone) return stop;
    r.start_ns = start_ns;
    if (r.end_ns == 0) r.end_ns = WallNanos();
    ch_.done_seq.store(seq, std::memory_order_release);  // publishes results[seq % K]
    // Wake the coordinator only when this worker is about to run dry; while
    // more is queued it finds the result at its next wake-up (another
    // worker's, or its wait slice), so tiny shards cost no wake-up each.
    if (ch_.assign_seq.load(std::memory_order_acquire) - seq <= kWakeWhenQueued) SemPost(view_.done_sem());
    return Stop::kNone;
  }

 private:
  struct Placed {
    uint64_t seq, offset, end;
  };

  // Runs the process function and places its partial; fills r, end_ns only
  // once the partial is encoded (ServeOne sets the start and a missing end).
  Stop Deliver(uint64_t seq, ShmResult& r) {
    Result<std::string> partial = Status::Internal("process function did not run");
    try {
      partial = process_(task_, ProgressFn(&ch_));
    } catch (const std::exception& e) {
      SetFailed(r, std::string("worker error on shard ") + std::to_string(task_.index) + ": " + e.what());
      return Stop::kNone;
    }
    if (!partial.ok()) {
      SetFailed(r, partial.status().message());
      return Stop::kNone;
    }
    const std::string& bytes = partial.value();
    r.end_ns = WallNanos();  // the shard's work is done; what follows is handing it over
    if (bytes.size() <= area_bytes_) {
      uint64_t offset = 0;
      Stop stop = Reserve(bytes.size(), &offset);
      if (stop != Stop::kNone) return stop;
      std::memcpy(area_ + offset, bytes.data(), bytes.size());
      placed_.push_back({seq, offset, pending_end_});
      r.offset = offset;
      r.in_file = 0;
      r.spill_name_length = 0;
    } else {
      if (spill_dir_.empty()) {
        SetFailed(r, "shard " + std::to_string(task_.index) + ": partial of " + std::to_string(bytes.size()) +
                         " bytes exceeds the " + std::to_string(area_bytes_) +
                         "-byte result area and no spill directory was given");
        return Stop::kNone;
      }
      std::string name = SpillFileName(segment_, slot_, seq);
      if (name.size() > kMaxSpillNameBytes) {
        SetFailed(r, "spill file name too long");
        return Stop::kNone;
      }
      Status st = WriteSpillFile(spill_dir_, name, bytes);
      if (!st.ok()) {
        SetFailed(r, st.message());
        return Stop::kNone;
      }
      std::memcpy(r.spill_name, name.data(), name.size());
      r.spill_name_length = static_cast<uint32_t>(name.size());
      r.in_file = 1;
      r.offset = 0;
    }
    r.length = bytes.size();
    r.error_length = 0;
    r.status = kResultOk;
    return Stop::kNone;
  }

  // Finds n contiguous free bytes in the result area (a ring of the
  // partials the coordinator has not taken yet), waiting for it to take
  // some when there is no room. REQUIRES: n <= area_bytes_.
  Stop Reserve(uint64_t n, uint64_t* offset) {
    n = std::max<uint64_t>(n, 1);  // every placed partial spans a byte, so the ring's order is plain
    for (;;) {
      const uint64_t taken = ch_.taken_seq.load(std::memory_order_seq_cst);
      while (!placed_.empty() && placed_.front().seq <= taken) placed_.pop_front();
      if (placed_.empty()) return Place(0, n, offset);
      const Placed& first = placed_.front();
      const Placed& last = placed_.back();
      if (last.offset >= first.offset) {
        // In use: [first.offset, last.end). Free: after it, and before it.
        if (area_bytes_ - last.end >= n) return Place(last.end, n, offset);
        if (first.offset >= n) return Place(0, n, offset);
      } else if (first.offset - last.end >= n) {
        // Wrapped: in use [first.offset, end) and [0, last.end).
        return Place(last.end, n, offset);
      }
      // Full: ask the coordinator for a post after its next take, then
      // re-check (it may have taken before it could see the request).
      ch_.wants_take.store(1, std::memory_order_seq_cst);
      SemPost(view_.done_sem());  // results wait for it, maybe unannounced
      if (ch_.taken_seq.load(std::memory_order_seq_cst) == taken) {
        Stop stop = Nap();
        if (stop != Stop::kNone) return stop;
      }
      ch_.wants_take.store(0, std::memory_order_relaxed);
    }
  }

  Stop Place(uint64_t at, uint64_t n, uint64_t* offset) {
    *offset = at;
    pending_end_ = at + n;
    return Stop::kNone;
  }

  const ShmView& view_;
  ShmChannel& ch_;
  ShmSemaphore& work_;
  uint32_t slot_;
  const std::string& segment_;
  const ProcessFn& process_;
  int coordinator_;
  std::string spill_dir_;
  char* area_;
  uint64_t area_bytes_;
  std::deque<Placed> placed_;  // partials in the area not yet taken, oldest first
  uint64_t pending_end_ = 0;   // end of the span Reserve just found
  ShardTask task_;  // reused: its path keeps its capacity between shards
};

}  // namespace

void ProgressFn::operator()(uint64_t records, uint64_t input_bytes) const {
  if (!channel_) return;
  channel_->records_done.store(records, std::memory_order_relaxed);
  channel_->bytes_done.store(input_bytes, std::memory_order_relaxed);
  Beat(*channel_);
}

Result<WorkerLaunch> ParseWorkerLaunch(int argc, const char* const* argv) {
  if (argc < 5 || std::strcmp(argv[1], kSegmentFlag) != 0 || std::strcmp(argv[3], kSlotFlag) != 0) {
    return Status::InvalidArgument(std::string("usage: worker ") + kSegmentFlag + " NAME " +
                                   kSlotFlag + " N [ARGS...] (started by the coordinator)");
  }
  WorkerLaunch launch;
  launch.segment = argv[2];
  const char* s = argv[4];
  const char* end = s + std::strlen(s);
  auto [p, ec] = std::from_chars(s, end, launch.slot);
  if (ec != std::errc() || p != end || launch.slot < 0) {
    return Status::InvalidArgument(std::string("bad worker slot '") + s + "'");
  }
  for (int i = 5; i < argc; ++i) launch.extra.emplace_back(argv[i]);
  return launch;
}

Status RunWorkerLoop(const std::string& segment, int slot, const ProcessFn& process,
                     const std::function<void(unsigned workers)>& on_attach) {
  // First thing: from here on the kernel kills us with the coordinator. The
  // spawner already asked for this before exec; asking again is harmless and
  // covers workers started some other way.
  FF_RETURN_IF_ERROR(KillMeWhenParentDies());
  IgnoreWorkerSignals();

  Result<std::unique_ptr<ShmSegment>> seg = ShmSegment::Open(segment);
  if (!seg.ok()) return seg.status();
  Result<ShmView> attached = ShmView::Attach((*seg)->data(), (*seg)->size());
  if (!attached.ok()) return attached.status().WithContext("segment '" + segment + "'");
  const ShmView& view = *attached;
  if (slot < 0 || static_cast<uint32_t>(slot) >= view.worker_count()) {
    return Status::InvalidArgument("worker slot " + std::to_string(slot) + " out of range; the run has " +
                                   std::to_string(view.worker_count()) + " workers");
  }
  const int coordinator = static_cast<int>(view.header().coordinator_pid);
  // The coordinator may have died before the parent-death signal was armed.
  if (ParentPid() != coordinator) {
    return Status::Interrupted("coordinator (pid " + std::to_string(coordinator) +
                               ") is not running; worker exiting");
  }

  if (on_attach) on_attach(view.worker_count());
  ShmChannel& ch = view.channel(static_cast<uint32_t>(slot));
  // Whatever an earlier worker of this slot left is settled: start in step.
  uint64_t done = ch.assign_seq.load(std::memory_order_acquire);
  ch.records_done.store(0, std::memory_order_relaxed);
  ch.bytes_done.store(0, std::memory_order_relaxed);
  ch.wants_take.store(0, std::memory_order_relaxed);
  ch.started_seq.store(done, std::memory_order_relaxed);
  ch.done_seq.store(done, std::memory_order_release);
  ch.worker_pid.store(static_cast<uint64_t>(CurrentPid()), std::memory_order_relaxed);
  Beat(ch);
  ch.ready_token.store(ch.spawn_token.load(std::memory_order_acquire), std::memory_order_release);
  SemPost(view.done_sem());

  const Status orphaned = Status::Interrupted("coordinator (pid " + std::to_string(coordinator) +
                                              ") is gone; worker exiting");
  Server server(view, static_cast<uint32_t>(slot), segment, process, coordinator);
  for (;;) {
    if (view.header().quit.load(std::memory_order_acquire) != 0) return Status::Ok();
    if (ch.assign_seq.load(std::memory_order_acquire) != done) {
      Stop stop = server.ServeOne(++done);
      if (stop == Stop::kQuit) return Status::Ok();
      if (stop == Stop::kOrphaned) return orphaned;
      continue;
    }
    if (server.Nap() == Stop::kOrphaned) return orphaned;
  }
}

}  // namespace fanfold
