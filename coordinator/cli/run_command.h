// `fanfold run`: load and check the job, expand its shards, fan them out to
// workers, merge in shard order, write the result table and the run summary.
// `fanfold check`: the same up to the shard list and the field check (a
// sample of the first shards), then print the plan and the shards and run
// nothing. Each returns a CommandOutcome; main() maps it
// to the exit status.
#pragma once

#include <string>

#include "coordinator/run/run_options.h"

namespace fanfold {

CommandOutcome RunJob(const RunOptions& options);

// `fanfold resume RUN_DIR`: options.run_dir names the run; job_path is
// ignored (the run's manifest names the job).
CommandOutcome ResumeRun(const RunOptions& options);

// The run directory `run` uses for job_path when --run-dir is not given.
std::string DefaultRunDir(const std::string& job_path);
// The run directory of `run --part I/N` without --run-dir:
// fanfold-runs/<job name>-part-I-of-N.
std::string DefaultPartRunDir(const std::string& job_path, uint32_t number, uint32_t count);

struct CheckOptions {
  std::string job_path;  // JOB: the job file
};

CommandOutcome CheckJob(const CheckOptions& options);

}  // namespace fanfold
