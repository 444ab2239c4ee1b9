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
  run_cmd->add_option("--run-dir", run.run_dir, "directory recording this run (default: next to the job file)");
  run_cmd->add_flag("--in-process", run.in_process, "debugging: process shards inside the coordinator");
  run_cmd->add_flag("-q,--quiet", run.quiet, "print nothing on stderr but errors");
  run_cmd->footer("Example:\n  fanfold run jobs/district_hourly.json -j 2 -o hourly.csv");

  CheckOptions check;
  CLI::App* check_cmd = app.add_subcommand("check", "Validate a job; print its plan and shards; run nothing.");
  check_cmd->add_option("JOB", check.job_path, "the job file (JSON)")->required();
  check_cmd->footer("Example:\n  fanfold check jobs/district_hourly.json");

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

  if (run_cmd->parsed()) {
    if (!workers_text.empty() && !ParseWorkerCount(workers_text, &run.workers)) {
      result.outcome.status = Status::InvalidArgument("-j/--workers: expected a whole number from 1 to 1024, found '" +
                                                      workers_text + "'");
      result.usage_hint = true;
      return result;
    }
    result.outcome = RunJob(run);
  } else if (check_cmd->parsed()) {
    result.outcome = CheckJob(check);
  }
  return result;
}

}  // namespace fanfold
