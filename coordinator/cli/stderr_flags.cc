#include "coordinator/cli/stderr_flags.h"

#include <algorithm>
#include <string>
#include <vector>

#include <CLI/CLI.hpp>

#include "common/base/nearest_names.h"
#include "coordinator/cli/numeric_flag.h"
#include "coordinator/run/console_log.h"

namespace fanfold {
namespace {

// Plain progress: at least 20 lines a second, at least one a day.
constexpr SecondsFlag kProgressEveryFlag{.name = "--progress-every", .min = 0.05, .max = 86400};

// "debug, info, ..." as a list, for "did you mean".
std::vector<std::string> Names(const std::string& list) {
  std::vector<std::string> names;
  for (size_t at = 0; at <= list.size();) {
    const size_t comma = std::min(list.find(", ", at), list.size());
    names.push_back(list.substr(at, comma - at));
    at = comma + 2;
  }
  return names;
}

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
                                   flags.log_level + "'" + DidYouMean(flags.log_level, Names(LogLevelNames())));
  SetLogLevel(quiet && level < LogLevel::kError ? LogLevel::kError : level);
  if (!run) return Status::Ok();
  if (!flags.progress.empty() && !ParseProgressMode(flags.progress, &run->progress))
    return Status::InvalidArgument("--progress: expected auto, live, plain or off, found '" + flags.progress + "'" +
                                   DidYouMean(flags.progress, {"auto", "live", "plain", "off"}));
  if (!flags.every.empty()) {
    Result<double> every = ParseSecondsFlag(kProgressEveryFlag, flags.every);
    if (!every.ok()) return every.status();
    run->progress_every_s = *every;
  }
  return Status::Ok();
}

}  // namespace fanfold
