// Exit codes of the fanfold binaries: their one home. Only main() picks one,
// from the Status or run outcome it is handed (ExitCodeFor).
#pragma once

#include "common/base/status.h"

namespace fanfold {

enum ExitCode : int {
  kExitOk = 0,            // every shard done
  kExitShardsFailed = 1,  // finished, but some shards failed (they are listed)
  kExitUsage = 2,         // bad usage or bad job file
  kExitIo = 3,            // I/O or system error
  kExitInterrupted = 130, // SIGINT / SIGTERM
};

// The exit code for a run that stopped with status s.
inline int ExitCodeFor(const Status& s) {
  switch (s.code()) {
    case Status::Code::kOk: return kExitOk;
    case Status::Code::kInvalidArgument: return kExitUsage;
    case Status::Code::kInterrupted: return kExitInterrupted;
    case Status::Code::kLimitExceeded:
    case Status::Code::kCorrupt: return kExitShardsFailed;
    default: return kExitIo;
  }
}

}  // namespace fanfold
