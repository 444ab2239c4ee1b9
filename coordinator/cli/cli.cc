#include "coordinator/cli/cli.h"

#include <algorithm>
#include <charconv>
#include <iostream>
#include <thread>

#include <CLI/CLI.hpp>

#include "coordinator/run/console_log.h"
#include "coordinator/cli/report_command.h"
#include "coordinator/cli/scale_command.h"

namespace fanfold {

bool ParseWorkerCount(const std::string& text, int* out) {
  int v = 0;
  auto [p, ec] = std::from_chars(text.data(), text.data() + text.size(), v);
  if (ec != std::errc() || p != text.data() + text.size() || v < 1 || v > 1024) return false;
  *out = v;
  return true;
}

CliOutcome ParseAndRun(int argc, char** argv) {
  CliOutcome result;
  auto usage = [&](const std::string& message) {
    result.outcome.status = Status::InvalidArgument(message);
    result.usage_hint = true;
    return result;
  };
  CLI::App app{"fanfold: split-apply-combine over sharded, compressed event logs, on every core.", "fanfold"};
  app.set_version_flag("--version", std::string("fanfold ") + FANFOLD_VERSION);
  app.require_subcommand(1);
  app.footer("Exit status: 0 all shards done, 1 some shards failed, 2 bad usage or job file,\n"
             "3 I/O or system error, 130 interrupted.");

  RunOptions run;
  std::string workers_text;
  CLI::App* run_cmd = app.add_subcommand("run", "Run a job and print (or write) its result table.");
  run_cmd->add_option("JOB", run.job_path, "the job file (JSON)")->required();
  run_cmd->add_option("-j,--workers", workers_text, "worker processes (default: one per core)");
  run_cmd->add_option("-o,--output", run.output_path, "write the result here instead of the job's emit.path ('-' = stdout)");
  run_cmd->add_option("--run-dir", run.run_dir, "directory recording this run (default: fanfold-runs/<job name>)");
  run_cmd->add_flag("--fresh", run.fresh, "discard an earlier run in the run directory and start over");
  std::string attempts_text, limit_text;
  run_cmd->add_option("--attempts", attempts_text, "tries per shard when its worker dies (default 3)");
  run_cmd->add_option("--shard-time-limit", limit_text, "kill and retry a shard's worker after this many seconds");
  run_cmd->add_flag("--in-process", run.in_process, "debugging: process shards inside the coordinator");
  run_cmd->add_flag("-q,--quiet", run.quiet, "print nothing on stderr but errors");
  // Progress and logging flags, shared by run and resume.
  struct StderrFlags {
    std::string progress, every, log_level;
  };
  auto add_stderr_flags = [](CLI::App* cmd, StderrFlags* f, bool progress) {
    if (progress) {
      cmd->add_option("--progress", f->progress,
                      "auto (default: a live line on a terminal, else plain), live, plain (a timestamped line "
                      "every few seconds) or off");
      cmd->add_option("--progress-every", f->every, "plain progress: seconds between lines (default 5)");
    }
    cmd->add_option("--log-level", f->log_level, std::string("messages on stderr: ") + LogLevelNames() + " (default info)");
  };
  StderrFlags run_flags, resume_flags, scale_flags, report_flags;
  add_stderr_flags(run_cmd, &run_flags, true);
  run_cmd->footer("Example:\n  fanfold run jobs/district_hourly.json -j 2 -o hourly.csv");

  RunOptions resume;
  std::string resume_workers;
  CLI::App* resume_cmd = app.add_subcommand("resume", "Finish a run: process only its failed, missing or changed shards.");
  resume_cmd->add_option("RUN_DIR", resume.run_dir, "the run directory that `fanfold run` printed")->required();
  resume_cmd->add_option("-j,--workers", resume_workers, "worker processes (default: one per core)");
  resume_cmd->add_option("-o,--output", resume.output_path, "write the result here instead of the job's emit.path");
  resume_cmd->add_flag("-q,--quiet", resume.quiet, "print nothing on stderr but errors");
  add_stderr_flags(resume_cmd, &resume_flags, true);
  resume_cmd->footer("Example:\n  fanfold resume fanfold-runs/district_hourly");

  CheckOptions check;
  CLI::App* check_cmd = app.add_subcommand("check", "Validate a job; print its plan and shards; run nothing.");
  check_cmd->add_option("JOB", check.job_path, "the job file (JSON)")->required();
  check_cmd->footer("Example:\n  fanfold check jobs/district_hourly.json");

  ScaleOptions scale;
  std::string scale_workers, scale_repeat;
  CLI::App* scale_cmd = app.add_subcommand("scale", "Time a job at several worker counts: speedup, efficiency, serial fraction.");
  scale_cmd->add_option("JOB", scale.job_path, "the job file (JSON)")->required();
  scale_cmd->add_option("--workers", scale_workers, "comma-separated worker counts (default: 1, 2, 4, ... up to the cores)");
  scale_cmd->add_option("--repeat", scale_repeat, "timed runs per worker count; the median is reported (default 1)");
  scale_cmd->add_option("--json", scale.json_path, "also write the measurements as JSON (for fanfold report --scale)");
  scale_cmd->add_option("--html", scale.html_path, "also write an HTML page with the scaling chart");
  scale_cmd->add_flag("-q,--quiet", scale.quiet, "print nothing on stderr but errors");
  add_stderr_flags(scale_cmd, &scale_flags, false);
  scale_cmd->footer("Example:\n  fanfold scale jobs/district_hourly.json --workers 1,2 --repeat 3 --html scale.html");

  ReportOptions report;
  CLI::App* report_cmd = app.add_subcommand("report", "Write a run's HTML report (timeline, shard times, bad records) and summarize it.");
  report_cmd->add_option("RUN_DIR", report.run_dir, "the run directory that `fanfold run` printed")->required();
  report_cmd->add_option("-o,--output", report.html_path, "the HTML file to write (default RUN_DIR/report.html)");
  report_cmd->add_option("--timings-json", report.timings_json_path, "also write every shard attempt's timings as a JSON array");
  report_cmd->add_option("--scale", report.scale_json_path, "add the scaling chart of a `fanfold scale --json` file");
  report_cmd->add_flag("-q,--quiet", report.quiet, "no summary on stdout");
  add_stderr_flags(report_cmd, &report_flags, false);
  report_cmd->footer("Example:\n  fanfold report fanfold-runs/district_hourly --timings-json timings.json");

  if (argc >= 2 && argv[1][0] != '-') {
    const std::string name = argv[1];
    bool known = false;
    for (const CLI::App* sub : app.get_subcommands({})) known = known || sub->get_name() == name;
    if (!known) {
      std::string list;
      for (const CLI::App* sub : app.get_subcommands({})) list += (list.empty() ? "" : ", ") + sub->get_name();
      return usage("unknown command '" + name + "'; expected one of: " + list);
    }
  }
  try {
    app.parse(argc, argv);
  } catch (const CLI::CallForHelp& e) {
    app.exit(e);
    result.exit_zero_early = true;
    return result;
  } catch (const CLI::CallForAllHelp& e) {
    app.exit(e);
    result.exit_zero_early = true;
    return result;
  } catch (const CLI::CallForVersion& e) {
    app.exit(e);
    result.exit_zero_early = true;
    return result;
  } catch (const CLI::ParseError& e) {
    result.outcome.status = Status::InvalidArgument(e.what());
    result.usage_hint = true;
    return result;
  }

  // Applies --log-level (and --quiet); then --progress and --progress-every into *o.
  auto apply_stderr_flags = [&](const StderrFlags& f, bool quiet, RunOptions* o) -> std::string {
    LogLevel level = quiet ? LogLevel::kError : LogLevel::kInfo;
    if (!f.log_level.empty() && !ParseLogLevel(f.log_level, &level))
      return std::string("--log-level: expected one of ") + LogLevelNames() + ", found '" + f.log_level + "'";
    SetLogLevel(quiet && level < LogLevel::kError ? LogLevel::kError : level);
    if (!o) return "";
    if (!f.progress.empty() && !ParseProgressMode(f.progress, &o->progress))
      return "--progress: expected auto, live, plain or off, found '" + f.progress + "'";
    if (!f.every.empty()) {
      double secs = 0;
      auto [p, ec] = std::from_chars(f.every.data(), f.every.data() + f.every.size(), secs);
      if (ec != std::errc() || p != f.every.data() + f.every.size() || !(secs >= 0.05) || secs > 86400)
        return "--progress-every: expected a number of seconds from 0.05 to 86400, found '" + f.every + "'";
      o->progress_every_s = secs;
    }
    return "";
  };
  auto workers_ok = [&](const std::string& text, RunOptions* o) {
    return text.empty() || ParseWorkerCount(text, &o->workers);
  };
  if (run_cmd->parsed()) {
    if (std::string e = apply_stderr_flags(run_flags, run.quiet, &run); !e.empty()) return usage(e);
    if (!workers_ok(workers_text, &run))
      return usage("-j/--workers: expected a whole number from 1 to 1024, found '" + workers_text + "'");
    if (!attempts_text.empty()) {
      int a = 0;
      if (!ParseWorkerCount(attempts_text, &a) || a > 100)
        return usage("--attempts: expected a whole number from 1 to 100, found '" + attempts_text + "'");
      run.max_attempts = static_cast<uint32_t>(a);
    }
    if (!limit_text.empty()) {
      double secs = 0;
      auto [p, ec] = std::from_chars(limit_text.data(), limit_text.data() + limit_text.size(), secs);
      if (ec != std::errc() || p != limit_text.data() + limit_text.size() || !(secs > 0) || secs > 1e6)
        return usage("--shard-time-limit: expected a number of seconds above 0, found '" + limit_text + "'");
      run.shard_time_limit_ms = static_cast<uint64_t>(secs * 1000 + 0.5);
    }
    result.outcome = RunJob(run);
  } else if (resume_cmd->parsed()) {
    if (std::string e = apply_stderr_flags(resume_flags, resume.quiet, &resume); !e.empty()) return usage(e);
    if (!workers_ok(resume_workers, &resume))
      return usage("-j/--workers: expected a whole number from 1 to 1024, found '" + resume_workers + "'");
    result.outcome = ResumeRun(resume);
  } else if (check_cmd->parsed()) {
    result.outcome = CheckJob(check);
  } else if (scale_cmd->parsed()) {
    if (std::string e = apply_stderr_flags(scale_flags, scale.quiet, nullptr); !e.empty()) return usage(e);
    if (scale_workers.empty()) {
      const unsigned cores = std::max(2u, std::thread::hardware_concurrency());
      for (unsigned p = 1; p < cores; p *= 2) scale_workers += std::to_string(p) + ",";
      scale_workers += std::to_string(cores);
    }
    if (std::string e = ParseWorkerList(scale_workers, &scale.workers); !e.empty()) return usage(e);
    if (!scale_repeat.empty() && (!ParseWorkerCount(scale_repeat, &scale.repeat) || scale.repeat > 100))
      return usage("--repeat: expected a whole number from 1 to 100, found '" + scale_repeat + "'");
    result.outcome = ScaleJob(scale);
  } else if (report_cmd->parsed()) {
    if (std::string e = apply_stderr_flags(report_flags, report.quiet, nullptr); !e.empty()) return usage(e);
    result.outcome = ReportRun(report);
  }
  return result;
}

}  // namespace fanfold
