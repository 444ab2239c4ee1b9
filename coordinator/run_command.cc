#include "coordinator/run_command.h"

#include <unistd.h>

#include <chrono>
#include <cstdio>
#include <filesystem>
#include <iostream>
#include <thread>

#include "common/file_util.h"
#include "common/output_table.h"
#include "coordinator/inprocess_transport.h"
#include "common/job_loader.h"
#include "coordinator/merger.h"
#include "coordinator/run_loop.h"
#include "coordinator/run_summary.h"
#include "coordinator/shard_scheduler.h"
#include "coordinator/transport_factory.h"

namespace fanfold {
namespace {

void Note(const RunOptions& o, const std::string& line) {
  if (!o.quiet) std::cerr << "fanfold: " << line << "\n";
}

// Where the result goes: -o, else the job's emit.path (relative to the job
// file), else stdout ("").
std::string OutputPath(const RunOptions& o, const Plan& plan) {
  if (!o.output_path.empty()) return o.output_path == "-" ? "" : o.output_path;
  const std::string& p = plan.spec.emit.path;
  if (p.empty()) return "";
  std::filesystem::path path(p);
  return path.is_absolute() ? p : (std::filesystem::path(plan.spec.base_dir) / path).string();
}

Status WriteOutput(const std::string& path, const std::string& text) {
  if (path.empty()) {
    std::fwrite(text.data(), 1, text.size(), stdout);
    std::fflush(stdout);
    if (std::ferror(stdout)) return Status::IoError("cannot write the result to stdout");
    return Status::Ok();
  }
  std::filesystem::path parent = std::filesystem::path(path).parent_path();
  std::error_code ec;
  if (!parent.empty()) std::filesystem::create_directories(parent, ec);
  return WriteFileAtomic(path, text);
}

}  // namespace

CommandOutcome RunJob(const RunOptions& o) {
  CommandOutcome out;
  const auto start = std::chrono::steady_clock::now();
  Result<LoadedJob> job = LoadJob(o.job_path);
  if (!job.ok()) {
    out.status = job.status();
    return out;
  }
  const Plan& plan = *job->plan;
  const ShardList& list = job->shards;

  int workers = o.workers > 0 ? o.workers : static_cast<int>(std::max(1u, std::thread::hardware_concurrency()));
  workers = std::min<int>(workers, std::max<size_t>(1, list.shards.size()));
  // Until the run directory exists, oversized partials spill to a private
  // temporary directory removed at the end of the run.
  std::error_code ec;
  std::filesystem::path spill = std::filesystem::temp_directory_path(ec) /
                                ("fanfold-spill-" + std::to_string(::getpid()));
  std::filesystem::create_directories(spill, ec);
  struct RemoveDir {
    std::filesystem::path p;
    ~RemoveDir() {
      std::error_code e;
      std::filesystem::remove_all(p, e);
    }
  } remove_spill{spill};
  Result<std::unique_ptr<Transport>> transport = MakeTransport(plan, o, workers, spill.string());
  if (!transport.ok()) {
    out.status = transport.status();
    return out;
  }
  Result<std::vector<uint32_t>> order = DispatchOrder(list.shards);
  if (!order.ok()) {
    out.status = order.status();
    return out;
  }

  Merger merger(&plan, static_cast<uint32_t>(list.shards.size()));
  RunLoopResult loop;
  RunLoopOptions loop_options;
  Status s = RunShards(list, *order, **transport, merger, loop_options, &loop);
  (*transport)->Shutdown();
  if (!s.ok()) {
    out.status = s;
    return out;
  }
  for (const auto& [shard, message] : merger.late_failures())
    loop.failures.push_back({shard, list.shards[shard].path, message});

  Result<OutputTable> table = merger.Finish();
  if (!table.ok()) {
    out.status = table.status();
    return out;
  }
  SortRows(&*table, plan.spec.emit.order);
  if (plan.spec.emit.limit && table->rows.size() > *plan.spec.emit.limit) table->rows.resize(*plan.spec.emit.limit);
  const std::string path = OutputPath(o, plan);
  Status w = WriteOutput(path, RenderTable(*table, plan.spec.emit.format));
  if (!w.ok()) {
    out.status = w;
    return out;
  }

  RunSummary summary;
  summary.shards_total = list.shards.size();
  summary.totals = merger.totals();
  summary.samples = merger.malformed_samples();
  summary.failures = loop.failures;
  summary.interrupted = loop.interrupted;
  summary.wall_seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  for (const auto& line : FormatRunSummary(summary, list)) Note(o, line);
  for (size_t m = 0; m < plan.measures.size(); ++m) {
    if (merger.skipped()[m] > 0)
      Note(o, "measure \"" + plan.measures[m].name + "\" skipped " + GroupedInteger(merger.skipped()[m]) +
                  " values that were missing, null or not usable");
  }
  if (!path.empty()) Note(o, "result written to " + path);
  if (loop.interrupted) out.status = Status::Interrupted("run interrupted");
  out.shards_failed = !loop.failures.empty();
  return out;
}

}  // namespace fanfold
