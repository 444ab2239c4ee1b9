// `fanfold run`: load and check the job, expand its shards, fan them out to
// workers, merge in shard order, write the result table and the run summary.
// `fanfold check`: the same up to the shard list, then print the plan and
// the shards and run nothing. Each returns a CommandOutcome; main() maps it
// to the exit status.
#pragma once

#include <string>

#include "common/base/status.h"
#include "coordinator/run/progress_mode.h"

namespace fanfold {

struct CommandOutcome {
  Status status;               // not ok: usage, job-file or system error
  bool shards_failed = false;  // finished, but some shards failed
};

// The options of `run` (and of `resume`, which reads job_path from the run's
// manifest and takes the defaults for the flags it lacks).
struct RunOptions {
  std::string job_path;       // JOB: the job file (run only)
  int workers = 0;            // 0 = one per available core
  std::string output_path;    // "" = the job's emit.path, else stdout
  std::string run_dir;        // "" = fanfold-runs/<job name> under the working directory
  bool fresh = false;         // discard an earlier run in run_dir instead of refusing
  uint32_t max_attempts = 3;  // tries per shard when its worker dies (1 + retries)
  uint64_t shard_time_limit_ms = 0;  // 0 = no limit
  bool in_process = false;    // debugging: no worker processes
  bool quiet = false;         // only errors on stderr
  ProgressMode progress = ProgressMode::kAuto;  // progress on stderr (quiet: none)
  double progress_every_s = 5;  // plain progress: seconds between lines
};

CommandOutcome RunJob(const RunOptions& options);

// `fanfold resume RUN_DIR`: options.run_dir names the run; job_path is
// ignored (the run's manifest names the job).
CommandOutcome ResumeRun(const RunOptions& options);

// The run directory `run` uses for job_path when --run-dir is not given.
std::string DefaultRunDir(const std::string& job_path);

struct CheckOptions {
  std::string job_path;  // JOB: the job file
};

CommandOutcome CheckJob(const CheckOptions& options);

}  // namespace fanfold
