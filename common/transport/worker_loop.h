// WorkerLoop: the worker process's side of the shared-memory transport. It
// attaches to the coordinator's segment, reports ready on its channel, then
// runs its queued shards one at a time, in order, through the caller's
// process function and hands each encoded partial back (result area, or a
// spill file when too big), starting the next without waiting for the
// coordinator to collect the last.
// It returns when told to quit or when the coordinator is gone. The worker
// is single-threaded; the protocol is in common/transport/shm_layout.h.
#pragma once

#include <cstdint>
#include <functional>
#include <string>
#include <vector>

#include "common/job/shard_task.h"
#include "common/base/status.h"

namespace fanfold {

struct ShmChannel;

// Handed to the process function: call it every few thousand records so the
// coordinator can show progress and see the worker alive. Cheap (two relaxed
// stores and a clock read), copyable, valid during the process call only.
class ProgressFn {
 public:
  ProgressFn() = default;  // reports nowhere (for testing a process function alone)
  explicit ProgressFn(ShmChannel* channel) : channel_(channel) {}
  // records / input_bytes: totals so far within the current shard.
  void operator()(uint64_t records, uint64_t input_bytes) const;

 private:
  ShmChannel* channel_ = nullptr;
};

using ProcessFn = std::function<Result<std::string>(const ShardTask&, ProgressFn)>;

// The worker's command line as the transport builds it:
//   <worker> --segment NAME --slot I <extra args...>
struct WorkerLaunch {
  std::string segment;
  int slot = -1;
  std::vector<std::string> extra;  // what followed, in order (e.g. the job file)
};
Result<WorkerLaunch> ParseWorkerLaunch(int argc, const char* const* argv);

// Serves shards until the coordinator says quit (returns Ok) or is found
// dead (returns Interrupted). Setup errors (bad segment, slot, version) are
// returned before anything is served. An error from `process` is reported to
// the coordinator as that shard's failure; the loop goes on.
// Also sets this process up as a worker: SIGKILL on parent death, SIGINT and
// SIGPIPE ignored. on_attach, when set, learns the run's worker count on
// this machine (the segment's slots) before the first shard.
Status RunWorkerLoop(const std::string& segment, int slot, const ProcessFn& process,
                     const std::function<void(unsigned workers)>& on_attach = nullptr);

}  // namespace fanfold
