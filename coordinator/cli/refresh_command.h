// `fanfold refresh RUN_DIR`: bring a run up to date with the files its job's
// patterns match now. Expands the patterns again (the run's copy of the job,
// or the edited original when its plan is unchanged), keeps the committed
// partial of every shard whose identity is unchanged, computes new and
// changed shards, drops shards whose file is gone (naming them), and writes
// the result of the new shard list — byte-identical to a `--fresh` run over
// the same files, since the merge folds the shards in the new list's order.
// Each refresh is a generation of the run (run.json, the journal). Returns
// the outcome for main() to map to the exit status, as `run` does.
#pragma once

#include "coordinator/run/run_options.h"

namespace fanfold {

// options.run_dir names the run; job_path is ignored.
CommandOutcome RefreshRun(const RunOptions& options);

}  // namespace fanfold
