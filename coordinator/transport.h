// Transport: how the coordinator hands shards to workers and gets encoded
// partial states back, whatever carries them (worker processes over shared
// memory today; an MPI transport later). The coordinator's scheduler,
// merge and journal see only this interface. Driven from one coordinator
// thread; implementations need not be thread-safe.
#pragma once

#include <cstdint>
#include <string>

#include "common/shard_task.h"
#include "common/status.h"

namespace fanfold {

struct TransportEvent {
  enum class Kind {
    kDone,       // the worker finished the shard; `partial` holds its encoded state
    kFailed,     // the worker reported an error for the shard (bad data etc.)
    kDied,       // the worker process exited or was killed while busy
  };
  Kind kind = Kind::kDone;
  int worker = -1;        // which worker
  uint32_t shard = 0;     // ShardTask::index
  std::string partial;    // kDone: the encoded partial state
  std::string message;    // kFailed: the worker's error; kDied: exit code/signal + last stderr lines
};

class Transport {
 public:
  virtual ~Transport() = default;
  // Number of workers available (fixed after construction).
  virtual int worker_count() const = 0;
  // True iff worker w is running and has no shard assigned.
  virtual bool idle(int w) const = 0;
  // Hands task to idle worker w. REQUIRES: idle(w).
  virtual Status Assign(int w, const ShardTask& task) = 0;
  // Blocks until some assigned shard completes or a worker dies, or until
  // timeout_ms passes (returns Ok with *got == false). A worker that died is
  // replaced by a fresh one before the next Assign to it.
  virtual Status Wait(int timeout_ms, TransportEvent* event, bool* got) = 0;
  // Kills worker w now (e.g. past the shard time limit). Its shard is then
  // reported by Wait as kDied and a fresh worker takes the slot.
  virtual Status Abort(int w) = 0;
  // Stops all workers and releases every resource (idempotent).
  virtual void Shutdown() = 0;
};

}  // namespace fanfold
