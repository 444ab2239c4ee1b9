#include "coordinator/cli/stderr_flags.h"

#include <CLI/CLI.hpp>

#include "coordinator/cli/numeric_flag.h"
#include "coordinator/run/console_log.h"

namespace fanfold {
namespace {

// Plain progress: at least 20 lines a second, at least one a day.
constexpr SecondsFlag kProgressEveryFlag{.name = "--progress-every", .min = 0.05, .max = 86400};

}  // namespace

void AddStderrFlags(CLI::App* cmd, StderrFlags* flags, bool with_progress) {
  if (with_progress) {
    cmd->add_option("--progress", flags->progress,
                    "auto (default: a live line on a terminal, else plain), live, plain (a timestamped line "
                    "every few seconds) or off");
    cmd->add_option("--progress-every", flags->every, "plain progress: seconds between lines (default 5)");
  }
  cmd->add_option("--log-level", flags->log_level,
                  std::string("messages on stderr: ") + LogLevelNames() + " (default info)");
}

Status ApplyStderrFlags(const StderrFlags& flags, bool quiet, RunOptions* run) {
  LogLevel level = quiet ? LogLevel::kError : LogLevel::kInfo;
  if (!flags.log_level.empty() && !ParseLogLevel(flags.log_level, &level))
    return Status::InvalidArgument(std::string("--log-level: expected one of ") + LogLevelNames() + ", found '" +
                                   flags.log_level + "'");
  SetLogLevel(quiet && level < LogLevel::kError ? LogLevel::kError : level);
  if (!run) return Status::Ok();
  if (!flags.progress.empty() && !ParseProgressMode(flags.progress, &run->progress))
    return Status::InvalidArgument("--progress: expected auto, live, plain or off, found '" + flags.progress + "'");
  if (!flags.every.empty()) {
    Result<double> every = ParseSecondsFlag(kProgressEveryFlag, flags.every);
    if (!every.ok()) return every.status();
    run->progress_every_s = *every;
  }
  return Status::Ok();
}

}  // namespace fanfold
