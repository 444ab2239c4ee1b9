// Transport: how the coordinator hands shards to workers and gets encoded
// partial states back, whatever carries them (worker processes over shared
// memory today; an MPI transport later). The coordinator's scheduler,
// merge and journal see only this interface. Driven from one coordinator
// thread; implementations need not be thread-safe. Every assigned shard
// comes back through Wait exactly once (kDone, kFailed, kDied or kReturned).
#pragma once

#include <cstdint>
#include <string>

#include "common/job/shard_task.h"
#include "common/base/status.h"

namespace fanfold {

struct TransportEvent {
  enum class Kind {
    kDone,       // the worker finished the shard; `partial` holds its encoded state
    kFailed,     // the worker reported an error for the shard (bad data etc.)
    kDied,       // the worker process exited or was killed while running the shard
    kReturned,   // the shard was queued on a worker that died before starting it:
                 // not an attempt; hand it out again
  };
  Kind kind = Kind::kDone;
  int worker = -1;        // which worker
  uint32_t shard = 0;     // ShardTask::index
  std::string partial;    // kDone: the encoded partial state
  std::string message;    // kFailed: the worker's error; kDied: exit code/signal + last stderr lines
  bool aborted = false;   // kDied: the worker was killed by Abort
  // Wall clock (ns since the Unix epoch) of the attempt as the worker saw it:
  // when it started the shard, and when it finished (kDied: when the death
  // was noticed). 0 = unknown; the caller then uses its own clock.
  uint64_t start_ns = 0;
  uint64_t end_ns = 0;
};

class Transport {
 public:
  virtual ~Transport() = default;
  // Number of workers available (fixed after construction).
  virtual int worker_count() const = 0;
  // True iff worker w is running and has no shard assigned.
  virtual bool idle(int w) const = 0;
  // How many more shards worker w accepts now (0 if it is down or its
  // queue is full). A worker runs its shards one at a time, in the order
  // they were assigned.
  virtual int room(int w) const = 0;
  // Queues task on worker w. REQUIRES: room(w) > 0.
  virtual Status Assign(int w, const ShardTask& task) = 0;
  // True iff worker w is processing a shard now; then *shard is its index
  // and *since_ns the wall clock at its start (for the per-shard time limit).
  virtual bool Running(int w, uint32_t* shard, uint64_t* since_ns) const = 0;
  // Blocks until some assigned shard completes or a worker dies, or until
  // timeout_ms passes (returns Ok with *got == false). A worker that died is
  // replaced by a fresh one before the next Assign to it.
  virtual Status Wait(int timeout_ms, TransportEvent* event, bool* got) = 0;
  // Kills worker w now (e.g. past the shard time limit). The shard it was
  // running is then reported by Wait as kDied (aborted), each one queued
  // behind it as kReturned, and a fresh worker takes the slot.
  virtual Status Abort(int w) = 0;
  // Stops all workers and releases every resource (idempotent).
  virtual void Shutdown() = 0;
  // Where worker w runs when that is not this machine (MPI: "rank 2 on
  // node7"), for the journal; "" for local workers.
  virtual std::string worker_node(int w) const { return ""; }
};

}  // namespace fanfold
