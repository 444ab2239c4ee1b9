// FaultPlan: deterministic fault injection for tests — make a worker crash,
// exit, stall or corrupt its partial on a chosen shard, attempt and record.
// Read only from the environment variable FANFOLD_TEST_ONLY_FAULTS, whose
// value must begin with "inject:" so that no stray setting can trigger it:
//   FANFOLD_TEST_ONLY_FAULTS='inject:crash:shard=3,attempt=1,after=100;stall:shard=5,ms=60000'
// Kinds: crash (SIGKILL itself), exit (code=N), stall (sleep ms, default
// forever), corrupt (flip one bit of the encoded partial), forge (cut the
// last byte of the partial's body, store the body raw and seal the checksum
// again: a partial that arrives whole but whose last group is cut short,
// found only when the merge reads that group). Keys: shard
// (required), attempt (default: every attempt), after (records, default 0).
// Immutable once parsed; used from the worker's single thread.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "common/job/shard_task.h"
#include "common/base/status.h"

namespace fanfold {

class FaultPlan {
 public:
  enum class Kind { kCrash, kExit, kStall, kCorrupt, kForge };
  struct Fault {
    Kind kind = Kind::kCrash;
    uint32_t shard = 0;
    uint32_t attempt = 0;  // 0 = any
    uint64_t after = 0;    // records processed before it fires
    int64_t ms = -1;       // stall: -1 = forever
    int code = 1;          // exit status
  };

  // Empty plan when the variable is unset; error when it is malformed.
  static Result<FaultPlan> FromEnvironment();
  static Result<FaultPlan> Parse(const std::string& text);

  // Hooks called by the worker: before reading, after each record, and
  // after encoding (may alter *partial).
  void OnStart(const ShardTask& task) const { OnRecord(task, 0); }
  void OnRecord(const ShardTask& task, uint64_t records) const;
  void OnFinish(const ShardTask& task, std::string* partial) const;

  const std::vector<Fault>& faults() const { return faults_; }

 private:
  std::vector<Fault> faults_;
};

}  // namespace fanfold
