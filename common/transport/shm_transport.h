// ShmTransport: the Transport of worker processes on this host, talking
// through one shared-memory segment (layout and protocol: common/transport/shm_layout.h).
// It owns the segment and the worker processes: a worker that dies is
// reported (kDied, with its exit status and last output) and replaced by a
// fresh process in the same slot. Drive it from the one coordinator thread
// that created it (the workers' parent-death signal is tied to that thread);
// not thread-safe.
#pragma once

#include <cstdint>
#include <deque>
#include <memory>
#include <string>
#include <vector>

#include "common/transport/shm_layout.h"
#include "common/transport/transport.h"

namespace fanfold {

class ChildProcess;
class ShmSegment;

struct ShmTransportOptions {
  std::string worker_binary;             // the worker program
  std::vector<std::string> worker_args;  // appended after "--segment NAME --slot I"
  int worker_count = 1;
  uint64_t result_area_bytes = kDefaultResultAreaBytes;  // per worker, rounded up to 4 KiB
  std::string spill_dir;                 // where bigger partials go; "" = they fail instead
  int ready_timeout_ms = 10000;          // how long a starting worker may take to report ready
  int shutdown_grace_ms = 2000;          // how long Shutdown waits before SIGKILL
  bool echo_worker_output = false;       // copy workers' stderr lines to ours as they come
};

class ShmTransport final : public Transport {
 public:
  // Removes stale segments of dead coordinators, creates the segment,
  // starts the workers and waits until every one is ready (bounded by
  // ready_timeout_ms). On error nothing is left behind.
  static Result<std::unique_ptr<ShmTransport>> Create(const ShmTransportOptions& options);
  ~ShmTransport() override;

  int worker_count() const override;
  bool idle(int w) const override;
  int room(int w) const override;  // up to kTaskRingSlots shards queued per worker
  Status Assign(int w, const ShardTask& task) override;
  bool Running(int w, uint32_t* shard, uint64_t* since_ns) const override;
  // A worker that died is restarted inside Wait before the event is
  // returned. Returns an error only when no worker can be kept running.
  Status Wait(int timeout_ms, TransportEvent* event, bool* got) override;
  // SIGKILLs worker w; the next Wait reports the shard it was running as
  // kDied, those it had finished as kDone/kFailed and those queued behind
  // as kReturned, and restarts the slot. Ok if w is already gone.
  Status Abort(int w) override;
  void Shutdown() override;

  // For progress display and tests.
  const std::string& segment_name() const;
  int worker_pid(int w) const;            // 0 if slot w has no running worker
  uint64_t records_done(int w) const;     // reported so far for w's current shard
  uint64_t heartbeat_age_ms(int w) const; // since w's last wake-up or progress report

 private:
  struct Slot;
  explicit ShmTransport(const ShmTransportOptions& options);
  // Starts a worker process for slot w (not waiting for it to be ready).
  Status StartWorker(int w);
  // Waits until every slot in `starting` is ready or the deadline passes.
  Status AwaitReady(const std::vector<int>& starting);
  // Restarts slot w after its process was reaped; marks it down on failure.
  void Restart(int w);
  // Finds one finished assignment; true iff *event was filled.
  bool ScanCompletions(TransportEvent* event);
  // Copies out the result of w's oldest assignment and frees its entry.
  // REQUIRES: it is complete (done_seq covers it).
  void TakeCompletion(int w, TransportEvent* event);
  // Reaps dead workers and turns each one's assignments into events in
  // pending_; true iff it added any.
  bool ScanExits();

  ShmTransportOptions options_;
  std::unique_ptr<ShmSegment> segment_;
  ShmView view_;
  std::vector<Slot> slots_;
  std::deque<TransportEvent> pending_;  // settled by ScanExits, handed out by Wait first
  int scan_start_ = 0;          // rotates, so no worker's results wait behind another's
  uint64_t last_exit_scan_ns_ = 0;
  bool shut_down_ = false;
};

}  // namespace fanfold
