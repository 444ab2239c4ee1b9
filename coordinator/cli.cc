#include "coordinator/cli.h"

#include <charconv>
#include <iostream>

#include <CLI/CLI.hpp>

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
  run_cmd->footer("Example:\n  fanfold run jobs/district_hourly.json -j 2 -o hourly.csv");

  RunOptions resume;
  std::string resume_workers;
  CLI::App* resume_cmd = app.add_subcommand("resume", "Finish a run: process only its failed, missing or changed shards.");
  resume_cmd->add_option("RUN_DIR", resume.run_dir, "the run directory that `fanfold run` printed")->required();
  resume_cmd->add_option("-j,--workers", resume_workers, "worker processes (default: one per core)");
  resume_cmd->add_option("-o,--output", resume.output_path, "write the result here instead of the job's emit.path");
  resume_cmd->add_flag("-q,--quiet", resume.quiet, "print nothing on stderr but errors");
  resume_cmd->footer("Example:\n  fanfold resume fanfold-runs/district_hourly");

  CheckOptions check;
  CLI::App* check_cmd = app.add_subcommand("check", "Validate a job; print its plan and shards; run nothing.");
  check_cmd->add_option("JOB", check.job_path, "the job file (JSON)")->required();
  check_cmd->footer("Example:\n  fanfold check jobs/district_hourly.json");

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

  auto workers_ok = [&](const std::string& text, RunOptions* o) {
    return text.empty() || ParseWorkerCount(text, &o->workers);
  };
  if (run_cmd->parsed()) {
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
    if (!workers_ok(resume_workers, &resume))
      return usage("-j/--workers: expected a whole number from 1 to 1024, found '" + resume_workers + "'");
    result.outcome = ResumeRun(resume);
  } else if (check_cmd->parsed()) {
    result.outcome = CheckJob(check);
  }
  return result;
}

}  // namespace fanfold
