// RunOptions and CommandOutcome: what a run is asked to do (filled by the
// CLI's `run` and `resume`) and what it hands back to main(), which alone
// maps the outcome to the exit status. Plain data.
#pragma once

#include <cstdint>
#include <string>

#include "common/base/status.h"
#include "coordinator/run/progress_mode.h"

namespace fanfold {

// `resume` without --attempts / --shard-time-limit: take the run's own.
inline constexpr uint32_t kAttemptsOfTheRun = 0;
inline constexpr uint64_t kTimeLimitOfTheRun = UINT64_MAX;

struct CommandOutcome {
  Status status;               // not ok: usage, job-file or system error
  bool shards_failed = false;  // finished, but some shards failed
};

// The options of `run` (and of `resume`, which reads job_path from the run's
// manifest and takes the defaults for the flags it lacks).
struct RunOptions {
  std::string job_path;       // JOB: the job file (run only)
  uint32_t part_number = 0;   // run --part I/N: I (1-based); 0 = the whole job
  uint32_t part_count = 0;    // N
  int workers = 0;            // 0 = one per available core
  std::string output_path;    // "" = the job's emit.path, else stdout
  // Results go only to the run directory (result*.<ext>), not to emit.path
  // or stdout: `scale` compares them between worker counts.
  bool results_in_run_dir_only = false;
  std::string run_dir;        // "" = fanfold-runs/<job name> under the working directory
  bool fresh = false;         // discard an earlier run in run_dir instead of refusing
  uint32_t max_attempts = 3;  // tries per shard when its worker dies (1 + retries);
                              // resume: kAttemptsOfTheRun = what the run used
  uint64_t shard_time_limit_ms = 0;  // 0 = no limit; resume: kTimeLimitOfTheRun = what the run used
  bool in_process = false;    // debugging: no worker processes
  bool quiet = false;         // only errors on stderr
  ProgressMode progress = ProgressMode::kAuto;  // progress on stderr (quiet: none)
  double progress_every_s = 5;  // plain progress: seconds between lines
  int digits = 0;             // > 0: CSV/table floats rounded to this many significant digits
  bool check_fields = true;   // sample the first shards for misspelt fields first (scale's timed runs: not)
  // The output stage's share of the memory budget: bytes of result rows held
  // while ordering them (past it, sorted files in <run dir>/merge). Results
  // never depend on it. Default kDefaultSortBytes (run/result_stream.h).
  uint64_t sort_bytes = uint64_t{64} << 20;
};

}  // namespace fanfold
