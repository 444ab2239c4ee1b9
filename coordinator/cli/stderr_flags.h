// StderrFlags: the flags that decide what a subcommand prints on stderr,
// shared by run, resume, scale and report: --log-level (with -q), and for run
// and resume --progress and --progress-every. CLI11 leaves their values as
// text; ApplyStderrFlags checks it. Main thread only (it sets the process's
// log level, coordinator/run/console_log.h).
#pragma once

#include <string>

#include "common/base/status.h"
#include "coordinator/cli/run_command.h"

namespace CLI {
class App;
}  // namespace CLI

namespace fanfold {

struct StderrFlags {
  std::string progress;   // --progress as typed ("" = not given: auto)
  std::string every;      // --progress-every as typed ("" = not given: 5 s)
  std::string log_level;  // --log-level as typed ("" = not given: info)
};

// Declares --progress and --progress-every (iff with_progress), then
// --log-level, on cmd, bound to *flags. REQUIRES: *flags outlives parsing.
void AddStderrFlags(CLI::App* cmd, StderrFlags* flags, bool with_progress);

// Sets the log level from flags.log_level, lowered to errors only by quiet;
// then, iff run is not null, fills run->progress and run->progress_every_s.
// A non-ok Status is a usage error naming the flag.
Status ApplyStderrFlags(const StderrFlags& flags, bool quiet, RunOptions* run);

}  // namespace fanfold
