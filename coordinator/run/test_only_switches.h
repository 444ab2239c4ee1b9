// Test-only switches: environment variables that tests (never users) set
// to force the merge, the output stage and the workers onto paths small jobs
// would not take, so those paths can be compared byte for byte with the
// usual ones. Each reads one variable; unset or empty leaves things as they
// are; a malformed value is an InvalidArgument naming the variable and what
// was expected. Coordinator main thread.
//   FANFOLD_TEST_ONLY_MERGE_RUNS=GROUPS[:THREADS] or cap[:THREADS]
//   FANFOLD_TEST_ONLY_MERGE_THREADS=N
//   FANFOLD_TEST_ONLY_WORKER_TABLE_BYTES=BYTES
//   FANFOLD_TEST_ONLY_STRAIGHT_FOLD=0|1
// (FANFOLD_TEST_ONLY_SORT_BYTES is read by coordinator/run/result/result_stream.)
#pragma once

#include <cstddef>
#include <cstdint>

#include "common/base/status.h"
#include "coordinator/run/merger.h"

namespace fanfold {

// Sets the merger's run threshold and key ranges; *threads_out = THREADS.
Status ApplyTestOnlyMergeRuns(Merger* merger, size_t* threads_out);
// Sets the merger's threads (call first: it resets the runs' key ranges too).
Status ApplyTestOnlyMergeThreads(Merger* merger);
// Whether the merge's last fold may go straight into the output (default
// yes; 0 folds it into a run first, the path before, for comparisons).
Result<bool> TestOnlyStraightFold();
// The worker table budget tests ask for; 0 when unset.
Result<uint64_t> TestOnlyWorkerTableBytes();

}  // namespace fanfold
