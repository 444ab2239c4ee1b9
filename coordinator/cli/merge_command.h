// `fanfold merge DIR_1 ... DIR_N`: joins the run directories of the N parts
// of one job (`run --part I/N`) into the result one `run` of the whole job
// gives, byte for byte. Checks first, refusing with the directory named:
// every directory a finished part with a committed partial for each of its
// shards; one plan; parts 1..N of one N, each once, cut from one full shard
// list (same shard identities) and covering it exactly. Then writes a run
// directory for the whole job (its run.json the full list, its partials
// copied from the parts) and finishes it as `resume` would with nothing
// left to process: the merge folds the partials in global shard order.
// Coordinator main thread only.
#pragma once

#include <string>
#include <vector>

#include "coordinator/run/run_options.h"

namespace fanfold {

struct MergeOptions {
  std::vector<std::string> parts;  // the parts' run directories, in any order
  // run_dir: the merged run directory ("" = fanfold-runs/<job name>, as
  // `run` would use); output_path, fresh, quiet, digits, progress as for run.
  RunOptions run;
};

CommandOutcome MergeParts(const MergeOptions& options);

}  // namespace fanfold
