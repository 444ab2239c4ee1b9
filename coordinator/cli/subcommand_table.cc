#include "coordinator/cli/subcommand_table.h"

#include <algorithm>
#include <optional>
#include <string>
#include <thread>

#include <CLI/CLI.hpp>

#include "common/base/byte_size.h"
#include "coordinator/cli/merge_command.h"
#include "coordinator/cli/numeric_flag.h"
#include "coordinator/cli/refresh_command.h"
#include "coordinator/cli/report_command.h"
#include "coordinator/cli/scale_command.h"
#include "coordinator/cli/stderr_flags.h"
#include "coordinator/rundir/shard_parts.h"

namespace fanfold {
namespace {

// The numeric flags' ranges (--progress-every's is in stderr_flags.cc).
constexpr WholeFlag kWorkersFlag{.name = "-j/--workers", .min = 1, .max = 1024};
constexpr WholeFlag kAttemptsFlag{.name = "--attempts", .min = 1, .max = 100};
// Above 0; a million seconds (11.6 days) caps values that can only be typos.
constexpr SecondsFlag kShardTimeLimitFlag{.name = "--shard-time-limit", .min = 0, .max = 1e6, .above_min = true};
constexpr WholeFlag kScaleWorkersFlag{.name = "--workers", .min = 1, .max = 1024};
constexpr WholeFlag kRepeatFlag{.name = "--repeat", .min = 1, .max = 100};
// 17 significant digits identify every double (IEEE 754-2008, 5.12.2).
constexpr WholeFlag kDigitsFlag{.name = "--digits", .min = 1, .max = 17};
constexpr const char* kDigitsHelp =
    "round CSV and table numbers to this many significant digits (1 to 17; default: every digit)";

constexpr const char* kMemoryCapHelp =
    "bound the coordinator's memory to this many bytes, e.g. 512MiB or 4GiB (default: the job's \"memory_cap\", "
    "else a quarter of the available memory, at most 128MiB); results do not change";

// --memory-cap SIZE into *out unless empty ("" = not given).
Status ParseMemoryCapIfGiven(const std::string& text, uint64_t* out) {
  if (text.empty()) return Status::Ok();
  std::optional<uint64_t> cap = ParseByteSize(text);
  if (!cap || *cap == 0)
    return Status::InvalidArgument(std::string("--memory-cap: expected a positive byte count: ") + kByteSizeExpected +
                                   ", found '" + text + "'");
  *out = *cap;
  return Status::Ok();
}

// Parses text into *out unless it is empty (the flag was not given, or given
// as ""; both keep the default, as they always have).
template <typename T>
Status ParseWholeIfGiven(const WholeFlag& flag, const std::string& text, T* out) {
  if (text.empty()) return Status::Ok();
  Result<int64_t> v = ParseWholeFlag(flag, text);
  if (!v.ok()) return v.status();
  *out = static_cast<T>(*v);
  return Status::Ok();
}

// --shard-time-limit in seconds into *out_ms unless empty (as above).
Status ParseTimeLimitIfGiven(const std::string& text, uint64_t* out_ms) {
  if (text.empty()) return Status::Ok();
  Result<double> secs = ParseSecondsFlag(kShardTimeLimitFlag, text);
  if (!secs.ok()) return secs.status();
  *out_ms = static_cast<uint64_t>(*secs * 1000 + 0.5);
  return Status::Ok();
}

// `fanfold run JOB`.
class RunSubcommand final : public Subcommand {
 public:
  void AddFlags(CLI::App* cmd) override {
    cmd->add_option("JOB", options_.job_path, "the job file (JSON)")->required();
    cmd->add_option("-j,--workers", workers_, "worker processes (default: one per core)");
    cmd->add_option("-o,--output", options_.output_path,
                    "write the result here instead of the job's emit.path ('-' = stdout)");
    cmd->add_option("--run-dir", options_.run_dir, "directory recording this run (default: fanfold-runs/<job name>)");
    cmd->add_flag("--fresh", options_.fresh, "discard an earlier run in the run directory and start over");
    part_option_ = cmd->add_option("--part", part_,
                    "run only part I of N (I/N, 1-based: 1/N .. N/N) of the shards, cut by bytes; "
                    "join the parts with `fanfold merge`");
    cmd->add_option("--attempts", attempts_, "tries per shard when its worker dies (default 3)");
    cmd->add_option("--shard-time-limit", time_limit_, "kill and retry a shard's worker after this many seconds");
    cmd->add_option("--digits", digits_, kDigitsHelp);
    cmd->add_option("--memory-cap", memory_cap_, kMemoryCapHelp);
    cmd->add_flag("--in-process", options_.in_process, "debugging: process shards inside the coordinator");
    cmd->add_flag("-q,--quiet", options_.quiet, "print nothing on stderr but errors");
    AddStderrFlags(cmd, &stderr_, /*with_progress=*/true);
  }
  Status CheckFlags() override {
    FF_RETURN_IF_ERROR(ApplyStderrFlags(stderr_, options_.quiet, &options_));
    FF_RETURN_IF_ERROR(ParseWholeIfGiven(kWorkersFlag, workers_, &options_.workers));
    FF_RETURN_IF_ERROR(ParseWholeIfGiven(kAttemptsFlag, attempts_, &options_.max_attempts));
    FF_RETURN_IF_ERROR(ParseWholeIfGiven(kDigitsFlag, digits_, &options_.digits));
    FF_RETURN_IF_ERROR(ParseMemoryCapIfGiven(memory_cap_, &options_.memory_cap));
    if (part_given()) {
      Result<PartNumber> p = ParsePartNumber(part_, "--part");
      if (!p.ok()) return p.status();
      options_.part_number = p->number;
      options_.part_count = p->count;
    }
    return ParseTimeLimitIfGiven(time_limit_, &options_.shard_time_limit_ms);
  }
  CommandOutcome Run() override { return RunJob(options_); }

 private:
  RunOptions options_;  // what RunJob gets; CLI11 fills its text and switch fields
  std::string workers_;     // -j/--workers as typed ("" = one per core)
  std::string attempts_;    // --attempts as typed ("" = 3)
  std::string time_limit_;  // --shard-time-limit as typed ("" = none)
  std::string digits_;      // --digits as typed ("" = every digit)
  std::string part_;        // --part as typed ("" = the whole job)
  std::string memory_cap_;  // --memory-cap as typed ("" = the job's, else the default)
  StderrFlags stderr_;      // --progress, --progress-every, --log-level
  CLI::Option* part_option_ = nullptr;
  bool part_given() const { return part_option_ != nullptr && part_option_->count() > 0; }
};

// `fanfold resume RUN_DIR` and `fanfold refresh RUN_DIR`: run's options,
// fewer of them on the command line.
template <CommandOutcome (*kCommand)(const RunOptions&)>
class SavedRunSubcommand final : public Subcommand {
 public:
  void AddFlags(CLI::App* cmd) override {
    cmd->add_option("RUN_DIR", options_.run_dir, "the run directory that `fanfold run` printed")->required();
    cmd->add_option("-j,--workers", workers_, "worker processes (default: one per core)");
    cmd->add_option("-o,--output", options_.output_path, "write the result here instead of the job's emit.path");
    cmd->add_option("--attempts", attempts_, "tries per shard when its worker dies (default: what the run used)");
    cmd->add_option("--shard-time-limit", time_limit_,
                    "kill and retry a shard's worker after this many seconds (default: what the run used)");
    cmd->add_option("--digits", digits_, kDigitsHelp);
    cmd->add_option("--memory-cap", memory_cap_, kMemoryCapHelp);
    cmd->add_flag("-q,--quiet", options_.quiet, "print nothing on stderr but errors");
    AddStderrFlags(cmd, &stderr_, /*with_progress=*/true);
  }
  Status CheckFlags() override {
    FF_RETURN_IF_ERROR(ApplyStderrFlags(stderr_, options_.quiet, &options_));
    FF_RETURN_IF_ERROR(ParseWholeIfGiven(kDigitsFlag, digits_, &options_.digits));
    FF_RETURN_IF_ERROR(ParseMemoryCapIfGiven(memory_cap_, &options_.memory_cap));
    options_.max_attempts = kAttemptsOfTheRun;
    FF_RETURN_IF_ERROR(ParseWholeIfGiven(kAttemptsFlag, attempts_, &options_.max_attempts));
    options_.shard_time_limit_ms = kTimeLimitOfTheRun;
    FF_RETURN_IF_ERROR(ParseTimeLimitIfGiven(time_limit_, &options_.shard_time_limit_ms));
    return ParseWholeIfGiven(kWorkersFlag, workers_, &options_.workers);
  }
  CommandOutcome Run() override { return kCommand(options_); }

 private:
  RunOptions options_;  // what the command gets (job_path unused: the run names its job)
  std::string attempts_;    // --attempts as typed ("" = what the run used)
  std::string time_limit_;  // --shard-time-limit as typed ("" = what the run used)
  std::string workers_;  // -j/--workers as typed ("" = one per core)
  std::string digits_;   // --digits as typed ("" = every digit)
  std::string memory_cap_;  // --memory-cap as typed ("" = the job's, else the default)
  StderrFlags stderr_;   // --progress, --progress-every, --log-level
};

// `fanfold merge DIR...`.
class MergeSubcommand final : public Subcommand {
 public:
  void AddFlags(CLI::App* cmd) override {
    cmd->add_option("PART_DIRS", options_.parts, "the run directories of the parts (fanfold run JOB --part I/N)")
        ->required();
    cmd->add_option("-o,--output", options_.run.output_path,
                    "write the result here instead of the job's emit.path ('-' = stdout)");
    cmd->add_option("--run-dir", options_.run.run_dir,
                    "directory recording the merged run (default: fanfold-runs/<job name>)");
    cmd->add_flag("--fresh", options_.run.fresh, "replace an earlier run in that directory");
    cmd->add_option("--digits", digits_, kDigitsHelp);
    cmd->add_option("--memory-cap", memory_cap_, kMemoryCapHelp);
    cmd->add_flag("-q,--quiet", options_.run.quiet, "print nothing on stderr but errors");
    AddStderrFlags(cmd, &stderr_, /*with_progress=*/false);
  }
  Status CheckFlags() override {
    FF_RETURN_IF_ERROR(ApplyStderrFlags(stderr_, options_.run.quiet, &options_.run));
    FF_RETURN_IF_ERROR(ParseMemoryCapIfGiven(memory_cap_, &options_.run.memory_cap));
    return ParseWholeIfGiven(kDigitsFlag, digits_, &options_.run.digits);
  }
  CommandOutcome Run() override { return MergeParts(options_); }

 private:
  MergeOptions options_;  // what MergeParts gets
  std::string digits_;    // --digits as typed ("" = every digit)
  std::string memory_cap_;  // --memory-cap as typed ("" = the job's, else the default)
  StderrFlags stderr_;    // --log-level
};

// `fanfold check JOB`.
class CheckSubcommand final : public Subcommand {
 public:
  void AddFlags(CLI::App* cmd) override {
    cmd->add_option("JOB", options_.job_path, "the job file (JSON)")->required();
  }
  Status CheckFlags() override { return Status::Ok(); }
  CommandOutcome Run() override { return CheckJob(options_); }

 private:
  CheckOptions options_;  // what CheckJob gets
};

// `fanfold scale JOB`.
class ScaleSubcommand final : public Subcommand {
 public:
  void AddFlags(CLI::App* cmd) override {
    cmd->add_option("JOB", options_.job_path, "the job file (JSON)")->required();
    cmd->add_option("--workers", workers_, "comma-separated worker counts (default: 1, 2, 4, ... up to the cores)");
    cmd->add_option("--repeat", repeat_, "timed runs per worker count; the median is reported (default 1)");
    cmd->add_option("--json", options_.json_path, "also write the measurements as JSON (for fanfold report --scale)");
    cmd->add_option("--html", options_.html_path, "also write an HTML page with the scaling chart");
    cmd->add_option("--memory-cap", memory_cap_, kMemoryCapHelp);
    cmd->add_flag("-q,--quiet", options_.quiet, "print nothing on stderr but errors");
    AddStderrFlags(cmd, &stderr_, /*with_progress=*/false);
  }
  Status CheckFlags() override {
    FF_RETURN_IF_ERROR(ApplyStderrFlags(stderr_, options_.quiet, nullptr));
    FF_RETURN_IF_ERROR(ParseMemoryCapIfGiven(memory_cap_, &options_.memory_cap));
    if (workers_.empty()) workers_ = DefaultWorkerCounts();
    Result<std::vector<int64_t>> counts = ParseWholeListFlag(kScaleWorkersFlag, workers_);
    if (!counts.ok()) return counts.status();
    options_.workers.assign(counts->begin(), counts->end());
    return ParseWholeIfGiven(kRepeatFlag, repeat_, &options_.repeat);
  }
  CommandOutcome Run() override { return ScaleJob(options_); }

 private:
  // "1,2,4,...,C" for C cores (at least 2).
  static std::string DefaultWorkerCounts() {
    const unsigned cores = std::max(2u, std::thread::hardware_concurrency());
    std::string counts;
    for (unsigned p = 1; p < cores; p *= 2) counts += std::to_string(p) + ",";
    return counts + std::to_string(cores);
  }

  ScaleOptions options_;  // what ScaleJob gets; CLI11 fills its text and switch fields
  std::string workers_;   // --workers as typed ("" = powers of two up to the cores)
  std::string repeat_;    // --repeat as typed ("" = 1)
  std::string memory_cap_;  // --memory-cap as typed ("" = the job's, else the default)
  StderrFlags stderr_;    // --log-level
};

// `fanfold report RUN_DIR`.
class ReportSubcommand final : public Subcommand {
 public:
  void AddFlags(CLI::App* cmd) override {
    cmd->add_option("RUN_DIR", options_.run_dir, "the run directory that `fanfold run` printed")->required();
    cmd->add_option("-o,--output", options_.html_path, "the HTML file to write (default RUN_DIR/report.html)");
    cmd->add_option("--timings-json", options_.timings_json_path,
                    "also write every shard attempt's timings as a JSON array");
    cmd->add_option("--scale", options_.scale_json_path, "add the scaling chart of a `fanfold scale --json` file");
    cmd->add_flag("-q,--quiet", options_.quiet, "no summary on stdout");
    AddStderrFlags(cmd, &stderr_, /*with_progress=*/false);
  }
  Status CheckFlags() override { return ApplyStderrFlags(stderr_, options_.quiet, nullptr); }
  CommandOutcome Run() override { return ReportRun(options_); }

 private:
  ReportOptions options_;  // what ReportRun gets
  StderrFlags stderr_;     // --log-level
};

template <typename T>
std::unique_ptr<Subcommand> Make() {
  return std::make_unique<T>();
}

constexpr SubcommandRow kRows[] = {
    {"run", "Run a job and print (or write) its result table.",
     "fanfold run jobs/district_hourly.json -j 2 -o hourly.csv", &Make<RunSubcommand>},
    {"resume", "Finish a run: process only its failed, missing or changed shards.",
     "fanfold resume fanfold-runs/district_hourly", &Make<SavedRunSubcommand<&ResumeRun>>},
    {"refresh", "Bring a run up to date: reuse unchanged shards, compute new or changed ones, drop vanished ones.",
     "fanfold refresh fanfold-runs/district_hourly", &Make<SavedRunSubcommand<&RefreshRun>>},
    {"merge", "Join the run directories of a job's parts (run --part I/N) into the whole job's result.",
     "fanfold merge part-1 part-2 part-3 -o hourly.csv", &Make<MergeSubcommand>},
    {"check", "Validate a job, sample its first records for misspelt fields; print its plan and shards; run nothing.",
     "fanfold check jobs/district_hourly.json", &Make<CheckSubcommand>},
    {"scale", "Time a job at several worker counts: speedup, efficiency, serial fraction.",
     "fanfold scale jobs/district_hourly.json --workers 1,2 --repeat 3 --html scale.html", &Make<ScaleSubcommand>},
    {"report", "Write a run's HTML report (timeline, shard times, bad records) and summarize it.",
     "fanfold report fanfold-runs/district_hourly --timings-json timings.json", &Make<ReportSubcommand>},
};

}  // namespace

std::span<const SubcommandRow> SubcommandTable() { return kRows; }

}  // namespace fanfold
