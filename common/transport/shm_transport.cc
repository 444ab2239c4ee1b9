#include "common/transport/shm_transport.h"

#include <algorithm>
#include <chrono>
#include <cstring>
#include <deque>
#include <filesystem>
#include <system_error>

#include "common/port/clock.h"
#include "common/port/process_control.h"
#include "common/port/process_spawner.h"
#include "common/port/shm_segment.h"
#include "common/transport/spill_file.h"

namespace fanfold {
namespace {

// Upper bound on how long a dead worker goes unnoticed while Wait runs; a
// waitpid(WNOHANG) per worker this often costs nothing measurable.
constexpr uint64_t kExitScanNs = 10'000'000;
constexpr int kWaitSliceMs = 10;
constexpr int kReadySliceMs = 5;

int64_t MillisUntil(std::chrono::steady_clock::time_point deadline) {
  auto left = deadline - std::chrono::steady_clock::now();
  // Rounded up, so a sub-millisecond remainder still waits instead of spinning.
  return std::chrono::ceil<std::chrono::milliseconds>(left).count();
}

std::string DescribeOutput(const ChildProcess& child) {
  std::string out = child.LastOutput();
  return out.empty() ? "; it printed nothing" : "; last output:\n" + out;
}

}  // namespace

struct ShmTransport::Slot {
  struct Queued {
    uint64_t seq;
    uint32_t shard;
  };
  std::unique_ptr<ChildProcess> child;
  bool ready = false;  // reported ready, and not since found dead
  uint64_t seq = 0;    // our copy of the channel's assign_seq
  uint64_t taken = 0;  // our copy of the channel's taken_seq
  std::deque<Queued> queued;  // assigned and not yet taken, in seq order
  uint64_t token = 0;  // spawn_token of the current process
  bool aborted = false;  // we killed it on purpose (Abort)
  std::string down;    // non-empty: no worker could be kept here; why
};

ShmTransport::ShmTransport(const ShmTransportOptions& options) : options_(options) {}

ShmTransport::~ShmTransport() { Shutdown(); }

Result<std::unique_ptr<ShmTransport>> ShmTransport::Create(const ShmTransportOptions& options) {
  if (options.worker_binary.empty()) return Status::InvalidArgument("no worker program given");
  if (!options.spill_dir.empty()) {
    std::error_code ec;
    if (!std::filesystem::is_directory(options.spill_dir, ec)) {
      return Status::InvalidArgument("spill directory '" + options.spill_dir + "' is not a directory");
    }
  }
  if (options.worker_count < 1) {
    return Status::InvalidArgument("worker count must be at least 1, got " +
                                   std::to_string(options.worker_count));
  }
  Result<ShmGeometry> geometry = ShmGeometry::Make(static_cast<uint32_t>(options.worker_count),
                                                   options.result_area_bytes);
  if (!geometry.ok()) return geometry.status();

  ShmSegment::RemoveStaleSegments();
  Result<std::unique_ptr<ShmSegment>> segment = ShmSegment::Create(geometry->total_bytes());
  if (!segment.ok()) return segment.status();
  Result<ShmView> view = ShmView::Initialize((*segment)->data(), (*segment)->size(), *geometry,
                                             static_cast<uint64_t>(CurrentPid()), options.spill_dir);
  if (!view.ok()) return view.status();

  std::unique_ptr<ShmTransport> t(new ShmTransport(options));
  t->segment_ = std::move(segment).value();
  t->view_ = *view;
  t->slots_.resize(static_cast<size_t>(options.worker_count));
  std::vector<int> all;
  for (int w = 0; w < options.worker_count; ++w) {
    FF_RETURN_IF_ERROR(t->StartWorker(w));  // on error ~ShmTransport cleans up
    all.push_back(w);
  }
  FF_RETURN_IF_ERROR(t->AwaitReady(all));
  return t;
}

Status ShmTransport::StartWorker(int w) {
  Slot& slot = slots_[static_cast<size_t>(w)];
  ShmChannel& ch = view_.channel(static_cast<uint32_t>(w));
  slot.token = ch.spawn_token.load(std::memory_order_relaxed) + 1;
  ch.spawn_token.store(slot.token, std::memory_order_release);
  SpawnOptions spawn;
  spawn.executable = options_.worker_binary;
  spawn.args = {kSegmentFlag, segment_->name(), kSlotFlag, std::to_string(w)};
  spawn.args.insert(spawn.args.end(), options_.worker_args.begin(), options_.worker_args.end());
  spawn.echo_output = options_.echo_worker_output;
  Result<std::unique_ptr<ChildProcess>> child = ChildProcess::Spawn(spawn);
  if (!child.ok()) return child.status().WithContext("worker " + std::to_string(w));
  slot.child = std::move(child).value();
  slot.ready = false;
  slot.aborted = false;
  slot.down.clear();
  return Status::Ok();
}

Status ShmTransport::AwaitReady(const std::vector<int>& starting) {
  const auto deadline =
      std::chrono::steady_clock::now() + std::chrono::milliseconds(options_.ready_timeout_ms);
  std::vector<int> pending = starting;
  // A worker killed while starting (from outside, or by the OOM killer) is
  // started again; one that keeps dying has a real problem, reported below.
  constexpr int kStartTries = 3;
  std::vector<int> tries(slots_.size(), 1);
  for (;;) {
    for (auto it = pending.begin(); it != pending.end();) {
      Slot& slot = slots_[static_cast<size_t>(*it)];
      const ShmChannel& ch = view_.channel(static_cast<uint32_t>(*it));
      if (ch.ready_token.load(std::memory_order_acquire) == slot.token) {
        slot.ready = true;
        it = pending.erase(it);
        continue;
      }
      if (slot.child->Poll()) {
        if (tries[static_cast<size_t>(*it)]++ < kStartTries) {
          slot.child.reset();
          FF_RETURN_IF_ERROR(StartWorker(*it));
          continue;  // look at the new process on the next pass
        }
        return Status::IoError("worker " + std::to_string(*it) + " (pid " +
                               std::to_string(slot.child->pid()) + ") " +
                               slot.child->exit_info().Describe() + " before it was ready" +
                               DescribeOutput(*slot.child));
      }
      ++it;
    }
    if (pending.empty()) return Status::Ok();
    if (MillisUntil(deadline) <= 0) {
      const Slot& slot = slots_[static_cast<size_t>(pending.front())];
      return Status::IoError("worker " + std::to_string(pending.front()) + " (pid " +
                             std::to_string(slot.child->pid()) + ") did not report ready within " +
                             std::to_string(options_.ready_timeout_ms) + " ms" +
                             DescribeOutput(*slot.child));
    }
    // Workers post done_sem when ready; a post meant for a completion is not
    // lost by this (Wait scans the channels before it blocks).
    SemWaitFor(view_.done_sem(), kReadySliceMs);
  }
}

void ShmTransport::Restart(int w) {
  Slot& slot = slots_[static_cast<size_t>(w)];
  slot.child.reset();  // already reaped; closes its pipe
  slot.ready = false;
  Status st = StartWorker(w);
  if (st.ok()) st = AwaitReady({w});
  if (!st.ok()) {
    slot.child.reset();  // kills and reaps one that never became ready
    slot.down = st.message();
  }
}

int ShmTransport::worker_count() const { return static_cast<int>(slots_.size()); }

bool ShmTransport::idle(int w) const {
  return room(w) == static_cast<int>(kTaskRingSlots);
}

int ShmTransport::room(int w) const {
  if (shut_down_ || w < 0 || w >= worker_count()) return 0;
  const Slot& slot = slots_[static_cast<size_t>(w)];
  if (!slot.ready || !slot.down.empty()) return 0;
  return static_cast<int>(kTaskRingSlots - slot.queued.size());
}

Status ShmTransport::Assign(int w, const ShardTask& task) {
  if (room(w) <= 0) return Status::Internal("Assign to worker " + std::to_string(w) + ", whose queue is full");
  if (task.path.size() > kMaxPathBytes) {
    return Status::InvalidArgument("shard path is " + std::to_string(task.path.size()) +
                                   " bytes long; a worker channel holds at most " +
                                   std::to_string(kMaxPathBytes) + ": " + task.path.substr(0, 80) +
                                   "...");
  }
  Slot& slot = slots_[static_cast<size_t>(w)];
  ShmChannel& ch = view_.channel(static_cast<uint32_t>(w));
  const uint64_t seq = slot.seq + 1;
  // Free: seq - kTaskRingSlots <= taken, so the worker is done with this entry.
  ShmTask& t = ch.tasks[seq % kTaskRingSlots];
  t.index = task.index;
  t.attempt = task.attempt;
  t.offset = task.offset;
  t.length = task.length;
  t.compression = static_cast<uint32_t>(task.compression);
  t.path_length = static_cast<uint32_t>(task.path.size());
  t.table_bytes = task.table_bytes;
  std::memcpy(t.path, task.path.data(), task.path.size());
  ch.assign_seq.store(seq, std::memory_order_release);  // publishes the task
  SemPost(view_.work_sem(static_cast<uint32_t>(w)));
  slot.seq = seq;
  slot.queued.push_back({seq, task.index});
  return Status::Ok();
}

bool ShmTransport::Running(int w, uint32_t* shard, uint64_t* since_ns) const {
  if (!view_.valid() || w < 0 || w >= worker_count()) return false;
  const Slot& slot = slots_[static_cast<size_t>(w)];
  if (!slot.child || slot.queued.empty()) return false;
  const ShmChannel& ch = view_.channel(static_cast<uint32_t>(w));
  const uint64_t started = ch.started_seq.load(std::memory_order_acquire);
  if (started <= slot.taken || started <= ch.done_seq.load(std::memory_order_acquire)) return false;
  const uint64_t since = ch.started_ns.load(std::memory_order_relaxed);
  // Moved on meanwhile: `since` may belong to the next shard; ask again later.
  if (ch.started_seq.load(std::memory_order_acquire) != started) return false;
  for (const Slot::Queued& q : slot.queued) {
    if (q.seq != started) continue;
    *shard = q.shard;
    *since_ns = since;
    return true;
  }
  return false;
}

void ShmTransport::TakeCompletion(int w, TransportEvent* event) {
  Slot& slot = slots_[static_cast<size_t>(w)];
  ShmChannel& ch = view_.channel(static_cast<uint32_t>(w));
  const Slot::Queued q = slot.queued.front();
  const ShmResult& r = ch.results[q.seq % kTaskRingSlots];
  event->worker = w;
  event->shard = q.shard;
  event->partial.clear();
  event->message.clear();
  event->aborted = false;
  event->start_ns = r.start_ns;
  event->end_ns = r.end_ns;
  if (r.status != kResultOk) {
    event->kind = TransportEvent::Kind::kFailed;
    event->message.assign(r.error, std::min<size_t>(r.error_length, kMaxErrorBytes));
  } else {
    event->kind = TransportEvent::Kind::kDone;
    Status st;
    if (r.in_file != 0) {
      std::string name(r.spill_name, std::min<size_t>(r.spill_name_length, kMaxSpillNameBytes));
      st = TakeSpillFile(options_.spill_dir, name, r.length, &event->partial);
    } else if (r.length > view_.result_area_bytes() || r.offset > view_.result_area_bytes() - r.length) {
      st = Status::Corrupt("worker reported a " + std::to_string(r.length) + "-byte partial at offset " +
                           std::to_string(r.offset) + ", outside its result area");
    } else {
      event->partial.assign(view_.result_area(static_cast<uint32_t>(w)) + r.offset, r.length);
    }
    if (!st.ok()) {
      event->kind = TransportEvent::Kind::kFailed;
      event->partial.clear();
      event->message = "shard " + std::to_string(q.shard) + ": " + st.message();
    }
  }
  // Copied out: the worker may reuse the entry and the bytes.
  slot.queued.pop_front();
  slot.taken = q.seq;
  ch.taken_seq.store(q.seq, std::memory_order_seq_cst);
  if (ch.wants_take.load(std::memory_order_seq_cst) != 0) SemPost(view_.work_sem(static_cast<uint32_t>(w)));
}

bool ShmTransport::ScanCompletions(TransportEvent* event) {
  const int n = worker_count();
  for (int k = 0; k < n; ++k) {
    const int w = (scan_start_ + k) % n;
    const Slot& slot = slots_[static_cast<size_t>(w)];
    if (slot.queued.empty()) continue;
    if (view_.channel(static_cast<uint32_t>(w)).done_seq.load(std::memory_order_acquire) <= slot.taken) {
      continue;
    }
    scan_start_ = (w + 1) % n;
    TakeCompletion(w, event);
    return true;
  }
  return false;
}

bool ShmTransport::ScanExits() {
  last_exit_scan_ns_ = MonotonicNanos();
  const int n = worker_count();
  bool reported = false;
  for (int k = 0; k < n; ++k) {
    const int w = (scan_start_ + k) % n;
    Slot& slot = slots_[static_cast<size_t>(w)];
    if (!slot.child || !slot.down.empty() || !slot.child->Poll()) continue;
    // Reaped: nothing writes this channel any more. Results it published
    // stand; the shard it had started died with it; the rest never began.
    ShmChannel& ch = view_.channel(static_cast<uint32_t>(w));
    const uint64_t done = ch.done_seq.load(std::memory_order_acquire);
    const uint64_t started = ch.started_seq.load(std::memory_order_acquire);
    std::vector<TransportEvent> events;
    while (!slot.queued.empty() && slot.queued.front().seq <= done) {
      events.emplace_back();
      TakeCompletion(w, &events.back());
    }
    int died = -1;
    for (const Slot::Queued& q : slot.queued) {
      TransportEvent& e = events.emplace_back();
      e.worker = w;
      e.shard = q.shard;
      if (q.seq == started && started > done) {
        died = static_cast<int>(events.size()) - 1;
        e.kind = TransportEvent::Kind::kDied;
        e.aborted = slot.aborted;
        e.start_ns = ch.started_ns.load(std::memory_order_relaxed);
        e.end_ns = WallNanos();
        e.message = "worker " + std::to_string(w) + " (pid " + std::to_string(slot.child->pid()) + ") " +
                    slot.child->exit_info().Describe() + " while processing shard " + std::to_string(q.shard) +
                    (slot.aborted ? " (stopped by the coordinator)" : "") + DescribeOutput(*slot.child);
      } else {
        e.kind = TransportEvent::Kind::kReturned;
      }
    }
    slot.queued.clear();
    slot.taken = slot.seq;
    ch.taken_seq.store(slot.seq, std::memory_order_seq_cst);  // settled: the next worker starts here
    Restart(w);
    if (died >= 0 && !slot.down.empty()) {
      events[static_cast<size_t>(died)].message += "\n(it could not be restarted: " + slot.down + ")";
    }
    for (TransportEvent& e : events) pending_.push_back(std::move(e));
    reported = reported || !events.empty();
  }
  return reported;
}

Status ShmTransport::Wait(int timeout_ms, TransportEvent* event, bool* got) {
  *got = false;
  if (shut_down_) return Status::Internal("Wait on a transport that was shut down");
  const auto deadline = std::chrono::steady_clock::now() + std::chrono::milliseconds(timeout_ms);
  for (;;) {
    if (!pending_.empty()) {
      *event = std::move(pending_.front());
      pending_.pop_front();
      *got = true;
      return Status::Ok();
    }
    // Exits are due every kExitScanNs even while completions keep coming, so
    // a steady stream of results cannot hide a dead worker.
    const int64_t left_ms = MillisUntil(deadline);
    if ((left_ms <= 0 || MonotonicNanos() - last_exit_scan_ns_ >= kExitScanNs) && ScanExits()) continue;
    // The sequence numbers, not the semaphore count, say what is done.
    if (ScanCompletions(event)) {
      *got = true;
      return Status::Ok();
    }
    if (std::all_of(slots_.begin(), slots_.end(), [](const Slot& s) { return !s.down.empty(); })) {
      return Status::IoError("no worker is running; worker 0: " + slots_[0].down);
    }
    if (left_ms <= 0) return Status::Ok();
    SemWaitFor(view_.done_sem(), static_cast<int>(std::min<int64_t>(left_ms, kWaitSliceMs)));
  }
}

Status ShmTransport::Abort(int w) {
  if (shut_down_ || w < 0 || w >= worker_count()) {
    return Status::InvalidArgument("Abort of unknown worker " + std::to_string(w));
  }
  Slot& slot = slots_[static_cast<size_t>(w)];
  if (!slot.child || slot.child->exited()) return Status::Ok();
  slot.child->Kill();
  slot.aborted = true;
  last_exit_scan_ns_ = 0;  // the next Wait looks for the exit at once
  return Status::Ok();
}

void ShmTransport::Shutdown() {
  if (shut_down_) return;
  shut_down_ = true;
  if (view_.valid()) {
    view_.header().quit.store(1, std::memory_order_release);
    for (uint32_t w = 0; w < view_.worker_count(); ++w) SemPost(view_.work_sem(w));
  }
  const auto deadline =
      std::chrono::steady_clock::now() + std::chrono::milliseconds(options_.shutdown_grace_ms);
  for (Slot& slot : slots_) {
    if (slot.child) slot.child->WaitExit(static_cast<int>(std::max<int64_t>(0, MillisUntil(deadline))));
  }
  for (Slot& slot : slots_) {
    if (!slot.child) continue;
    slot.child->Kill();  // no-op for those that already exited
    slot.child->WaitExit(-1);
    slot.child.reset();
  }
  // Every worker is reaped: nothing can touch the semaphores any more.
  view_.Destroy();
  segment_.reset();
}

const std::string& ShmTransport::segment_name() const {
  static const std::string kNone;
  return segment_ ? segment_->name() : kNone;
}

int ShmTransport::worker_pid(int w) const {
  if (w < 0 || w >= worker_count()) return 0;
  const Slot& slot = slots_[static_cast<size_t>(w)];
  return slot.child && !slot.child->exited() ? slot.child->pid() : 0;
}

uint64_t ShmTransport::records_done(int w) const {
  if (!view_.valid() || w < 0 || w >= worker_count()) return 0;
  return view_.channel(static_cast<uint32_t>(w)).records_done.load(std::memory_order_relaxed);
}

uint64_t ShmTransport::heartbeat_age_ms(int w) const {
  if (!view_.valid() || w < 0 || w >= worker_count()) return 0;
  uint64_t then = view_.channel(static_cast<uint32_t>(w)).heartbeat_ns.load(std::memory_order_relaxed);
  uint64_t now = MonotonicNanos();
  return now > then ? (now - then) / 1'000'000 : 0;
}

}  // namespace fanfold
