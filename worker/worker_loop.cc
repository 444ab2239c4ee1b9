#include "worker/worker_loop.h"

#include <charconv>
#include <cstring>
#include <exception>

#include "common/byte_source.h"
#include "common/process_control.h"
#include "common/shm_layout.h"
#include "common/shm_segment.h"
#include "common/spill_file.h"

namespace fanfold {
namespace {

// How long a worker sleeps on its work semaphore before it checks that the
// coordinator is still its parent: bounds how long an orphan outlives it
// where the parent-death signal is unavailable.
constexpr int kParentCheckMs = 200;

void Beat(ShmChannel& ch) {
  ch.heartbeat_ns.store(MonotonicNanos(), std::memory_order_relaxed);
  ch.heartbeat_count.fetch_add(1, std::memory_order_relaxed);
}

void SetFailed(ShmChannel& ch, std::string_view message) {
  ch.result_status = kResultFailed;
  ch.result_in_file = 0;
  ch.result_length = 0;
  ch.spill_name_length = 0;
  ch.error_length = CopyBoundedText(message, ch.error, kMaxErrorBytes);
}

// Reads the coordinator's task fields. REQUIRES: assign_seq was loaded with
// acquire and is newer than our last completion.
Status ReadTask(const ShmChannel& ch, ShardTask* task) {
  if (ch.task_path_length > kMaxPathBytes) {
    return Status::Corrupt("task path length " + std::to_string(ch.task_path_length) +
                           " in the shared-memory channel exceeds " + std::to_string(kMaxPathBytes));
  }
  if (ch.task_compression > static_cast<uint32_t>(Compression::kGzip)) {
    return Status::Corrupt("unknown compression " + std::to_string(ch.task_compression) +
                           " in the shared-memory channel");
  }
  task->index = ch.task_index;
  task->attempt = ch.task_attempt;
  task->offset = ch.task_offset;
  task->length = ch.task_length;
  task->compression = static_cast<Compression>(ch.task_compression);
  task->path.assign(ch.task_path, ch.task_path_length);
  return Status::Ok();
}

class Server {
 public:
  Server(const ShmView& view, uint32_t slot, const std::string& segment, const ProcessFn& process)
      : view_(view), ch_(view.channel(slot)), slot_(slot), segment_(segment), process_(process),
        spill_dir_(view.spill_dir()) {}

  // Serves assignment seq; fills the worker's result fields.
  void ServeOne(uint64_t seq) {
    ch_.records_done.store(0, std::memory_order_relaxed);
    ch_.bytes_done.store(0, std::memory_order_relaxed);
    Status st = ReadTask(ch_, &task_);
    if (!st.ok()) return SetFailed(ch_, st.message());
    Result<std::string> partial = Status::Internal("process function did not run");
    try {
      partial = process_(task_, ProgressFn(&ch_));
    } catch (const std::exception& e) {
      return SetFailed(ch_, std::string("worker error on shard ") + std::to_string(task_.index) +
                                ": " + e.what());
    }
    if (!partial.ok()) return SetFailed(ch_, partial.status().message());
    const std::string& bytes = partial.value();
    if (bytes.size() <= view_.result_area_bytes()) {
      std::memcpy(view_.result_area(slot_), bytes.data(), bytes.size());
      ch_.result_in_file = 0;
      ch_.spill_name_length = 0;
    } else {
      if (spill_dir_.empty()) {
        return SetFailed(ch_, "shard " + std::to_string(task_.index) + ": partial of " +
                                  std::to_string(bytes.size()) + " bytes exceeds the " +
                                  std::to_string(view_.result_area_bytes()) +
                                  "-byte result area and no spill directory was given");
      }
      std::string name = SpillFileName(segment_, slot_, seq);
      if (name.size() > kMaxSpillNameBytes) return SetFailed(ch_, "spill file name too long");
      st = WriteSpillFile(spill_dir_, name, bytes);
      if (!st.ok()) return SetFailed(ch_, st.message());
      std::memcpy(ch_.spill_name, name.data(), name.size());
      ch_.spill_name_length = static_cast<uint32_t>(name.size());
      ch_.result_in_file = 1;
    }
    ch_.result_length = bytes.size();
    ch_.error_length = 0;
    ch_.result_status = kResultOk;
  }

 private:
  const ShmView& view_;
  ShmChannel& ch_;
  uint32_t slot_;
  const std::string& segment_;
  const ProcessFn& process_;
  std::string spill_dir_;
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

Status RunWorkerLoop(const std::string& segment, int slot, const ProcessFn& process) {
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

  ShmChannel& ch = view.channel(static_cast<uint32_t>(slot));
  ShmSemaphore& work = view.work_sem(static_cast<uint32_t>(slot));
  ShmSemaphore& done_sem = view.done_sem();
  // Whatever an earlier worker of this slot left is settled: start in step.
  uint64_t done = ch.assign_seq.load(std::memory_order_acquire);
  ch.records_done.store(0, std::memory_order_relaxed);
  ch.bytes_done.store(0, std::memory_order_relaxed);
  ch.done_seq.store(done, std::memory_order_release);
  ch.worker_pid.store(static_cast<uint64_t>(CurrentPid()), std::memory_order_relaxed);
  Beat(ch);
  ch.ready_token.store(ch.spawn_token.load(std::memory_order_acquire), std::memory_order_release);
  SemPost(done_sem);

  Server server(view, static_cast<uint32_t>(slot), segment, process);
  for (;;) {
    if (view.header().quit.load(std::memory_order_acquire) != 0) return Status::Ok();
    const uint64_t seq = ch.assign_seq.load(std::memory_order_acquire);
    if (seq != done) {
      server.ServeOne(seq);
      done = seq;
      ch.done_seq.store(seq, std::memory_order_release);  // publishes the result fields
      SemPost(done_sem);
      continue;
    }
    // Spurious or stale wake-ups are fine: the loop trusts the sequence numbers, not the count.
    if (!SemWaitFor(work, kParentCheckMs) && ParentPid() != coordinator) {
      return Status::Interrupted("coordinator (pid " + std::to_string(coordinator) +
                                 ") is gone; worker exiting");
    }
    Beat(ch);
  }
}

}  // namespace fanfold
