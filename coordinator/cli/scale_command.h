// `fanfold scale JOB --workers 1,2,4`: runs the same job from scratch at
// each worker count (after one untimed warm-up run, so the page cache holds
// the input), in temporary run directories removed afterwards; prints the
// scaling table on stdout, notes on stderr; checks that every run wrote a
// byte-identical result; optionally writes the ScaleResult as JSON and as an
// HTML chart. Runs the run machinery in this process (RunJob), one run at a
// time. Main thread only.
#pragma once

#include <string>
#include <vector>

#include "coordinator/cli/run_command.h"

namespace fanfold {

struct ScaleOptions {
  std::string job_path;      // JOB: the job file
  std::vector<int> workers;  // ascending, distinct (--workers, numeric_flag.h)
  int repeat = 1;            // timed runs per worker count; the median is reported
  std::string json_path;     // "" = no JSON file
  std::string html_path;     // "" = no HTML file
  bool quiet = false;        // only errors on stderr
  uint64_t memory_cap = 0;   // --memory-cap for every timed run (0 = the job's, else the default)
};

// Exit semantics as `run`: shards_failed is also set when the runs' results
// differ (a determinism bug worth a non-zero exit).
CommandOutcome ScaleJob(const ScaleOptions& options);

}  // namespace fanfold
