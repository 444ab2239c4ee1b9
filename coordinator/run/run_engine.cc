#include "coordinator/run/run_engine.h"

#include <unistd.h>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <filesystem>
#include <iostream>
#include <thread>
#include <unordered_set>

#include <nlohmann/json.hpp>

#include "common/base/cell_text.h"
#include "common/port/file_util.h"
#include "common/job/job_loader.h"
#include "coordinator/output/output_table.h"
#include "common/port/shm_segment.h"
#include "common/port/signal_guard.h"
#include "coordinator/run/console_log.h"
#include "coordinator/run/merger.h"
#include "coordinator/run/progress_meter.h"
#include "coordinator/run/run_loop.h"
#include "coordinator/run/run_summary.h"
#include "coordinator/run/shard_scheduler.h"
#include "coordinator/run/transport_factory.h"
#include "coordinator/rundir/run_journal.h"

namespace fanfold {
namespace {

using nlohmann::json;

uint64_t WallNs() {
  return static_cast<uint64_t>(std::chrono::duration_cast<std::chrono::nanoseconds>(
                                   std::chrono::system_clock::now().time_since_epoch())
                                   .count());
}

std::string ResultName(OutputFormat f) {
  switch (f) {
    case OutputFormat::kCsv: return "result.csv";
    case OutputFormat::kJson: return "result.json";
    case OutputFormat::kNdjson: return "result.ndjson";
    case OutputFormat::kTable: return "result.txt";
  }
  return "result";
}

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

json SummaryJson(const RunInput& in, const RunSummary& s, const Merger& merger, const std::string& output,
                 int workers, uint64_t retries) {
  const Plan& plan = *in.plan;
  json failed = json::array();
  for (const auto& f : s.failures)
    failed.push_back({{"shard", f.shard}, {"path", f.path}, {"attempts", f.attempts}, {"reason", f.message}});
  json samples = json::array();
  for (const auto& m : s.samples) {
    const Shard& shard = in.shards->shards[m.shard];
    json sample = {{"shard", m.shard}, {"path", shard.path}, {"line", m.sample.line}, {"reason", m.sample.reason}};
    if (shard.offset > 0) sample["chunk_offset"] = shard.offset;  // the line counts from there
    samples.push_back(std::move(sample));
  }
  json skipped = json::object();
  json inexact = json::object();
  for (size_t m = 0; m < plan.measures.size() && m < merger.skipped().size(); ++m) {
    skipped[plan.measures[m].name] = merger.skipped()[m];
    if (merger.degraded()[m] > 0) inexact[plan.measures[m].name] = merger.degraded()[m];
  }
  const MergeTotals& t = s.totals;
  return {{"job", plan.spec.job_path},
          {"plan", FingerprintHex(plan.fingerprint)},
          {"run_dir", in.dir->path()},
          {"workers", workers},
          {"shards", {{"total", s.shards_total}, {"done", t.shards_merged}, {"failed", s.failures.size()},
                      {"reused", in.reused.size()}, {"retries", retries}}},
          {"records", {{"read", t.records}, {"kept", t.kept}, {"malformed", t.malformed}}},
          {"bytes", {{"compressed", t.compressed_bytes}, {"decompressed", t.raw_bytes}}},
          {"wall_seconds", s.wall_seconds},
          {"failed", failed},
          {"malformed_samples", samples},
          {"skipped", skipped},
          {"inexact_groups", inexact},
          {"output", output.empty() ? "stdout" : output}};
}

}  // namespace

CommandOutcome ExecuteRun(const RunInput& in, const RunOptions& o) {
  CommandOutcome out;
  const auto start = std::chrono::steady_clock::now();
  auto note = [&](const std::string& line) {
    if (!o.quiet) LogInfo(line);
  };
  const Plan& plan = *in.plan;
  const ShardList& list = *in.shards;
  RunDirectory& dir = *in.dir;
  SignalGuard signals;
  // Orphans of coordinators that died are removed at every start, even when
  // nothing is left to process and no transport is made.
  ShmSegment::RemoveStaleSegments();

  Merger merger(&plan, static_cast<uint32_t>(list.shards.size()));
  merger.SetReloader([&dir](uint32_t shard, std::string* out) {
    Status s = dir.LoadStagedOrCommitted(shard, out);
    if (s.ok() && out->empty()) s = Status::Internal("no saved partial for shard " + std::to_string(shard));
    return s;
  });
  for (uint32_t s : in.reused) {
    std::string bytes;
    Status st = dir.LoadPartial(s, &bytes);
    if (st.ok()) st = merger.Add(s, std::move(bytes));
    if (!st.ok()) {
      out.status = st.WithContext("reading the committed partial of shard " + std::to_string(s));
      return out;
    }
  }

  int workers = o.workers > 0 ? o.workers : static_cast<int>(std::max(1u, std::thread::hardware_concurrency()));
  workers = std::max(1, std::min<int>(workers, static_cast<int>(in.pending.size())));
  dir.StageJournal(StartEventLine(in.mode, ::getpid(), workers, in.pending.size(), in.reused.size(), WallNs()));
  RunLoopResult loop;
  if (!in.pending.empty()) {
    Result<std::unique_ptr<Transport>> transport =
        MakeTransport(plan, o, workers, (std::filesystem::path(dir.path()) / "partials").string());
    if (!transport.ok()) {
      out.status = transport.status();
      return out;
    }
    Result<std::vector<uint32_t>> all = DispatchOrder(list.shards);
    if (!all.ok()) {
      out.status = all.status();
      return out;
    }
    std::unordered_set<uint32_t> pending(in.pending.begin(), in.pending.end());
    std::vector<uint32_t> order;
    for (uint32_t s : *all)
      if (pending.count(s)) order.push_back(s);
    ProgressMeter meter(o.quiet ? ProgressMode::kOff : o.progress, o.progress_every_s, list, order);
    RunLoopOptions lo;
    lo.max_attempts = o.max_attempts;
    lo.shard_time_limit_ms = o.shard_time_limit_ms;
    lo.should_stop = [] { return SignalGuard::interrupted(); };
    lo.on_attempt = [&](const AttemptRecord& r) {
      dir.StageJournal(AttemptEventLine(r));
      meter.OnAttempt(r);
    };
    lo.on_partial = [&](uint32_t shard, const std::string& bytes) { return dir.StagePartial(shard, bytes); };
    lo.on_idle = [&]() {
      meter.Tick();
      return dir.commit_due() ? dir.Commit() : Status::Ok();
    };
    Status s = RunShards(list, order, **transport, merger, lo, &loop);
    meter.Finish();
    (*transport)->Shutdown();
    Status c = dir.Commit();
    if (!s.ok()) {
      out.status = s;
      return out;
    }
    if (!c.ok()) {
      out.status = c;
      return out;
    }
  }
  for (const auto& [shard, message] : merger.late_failures())
    loop.failures.push_back({shard, list.shards[shard].path, message, 1});

  RunSummary summary;
  summary.shards_total = list.shards.size();
  summary.totals = merger.totals();
  summary.samples = merger.malformed_samples();
  summary.failures = loop.failures;
  summary.interrupted = loop.interrupted;
  summary.wall_seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  if (loop.interrupted) {
    dir.StageJournal(InterruptedEventLine(WallNs()));
    (void)dir.Commit();
    for (const auto& line : FormatRunSummary(summary, list)) note(line);
    note("interrupted; finished shards are saved. To finish the run: fanfold resume " + dir.path());
    out.status = Status::Interrupted("run interrupted by signal " + std::to_string(SignalGuard::signal_number()));
    return out;
  }

  Result<OutputTable> table = merger.Finish();
  if (!table.ok()) {
    out.status = table.status();
    return out;
  }
  SortRows(&*table, plan.spec.emit.order);
  if (plan.spec.emit.limit && table->rows.size() > *plan.spec.emit.limit) table->rows.resize(*plan.spec.emit.limit);
  const std::string text = RenderTable(*table, plan.spec.emit.format);
  const std::string path = OutputPath(o, plan);
  Status w = dir.WriteFile(ResultName(plan.spec.emit.format), text);
  if (w.ok()) w = WriteOutput(path, text);
  summary.wall_seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  if (w.ok())
    w = dir.WriteFile("summary.json", SummaryJson(in, summary, merger, path, workers, loop.retries).dump(1) + "\n");
  dir.StageJournal(FinishEventLine(WallNs(), loop.failures.size()));
  if (w.ok()) w = dir.Commit();
  if (!w.ok()) {
    out.status = w;
    return out;
  }

  for (const auto& line : FormatRunSummary(summary, list)) note(line);
  for (size_t m = 0; m < plan.measures.size(); ++m) {
    if (merger.skipped()[m] > 0)
      note("measure \"" + plan.measures[m].name + "\" skipped " + GroupedInteger(merger.skipped()[m]) +
           " values that were missing, null or not usable");
  }
  for (size_t m = 0; m < plan.measures.size(); ++m) {
    if (merger.degraded()[m] > 0)
      note("warning: measure \"" + plan.measures[m].name + "\" saw more distinct values than its limit of " +
           std::to_string(plan.measures[m].config.limit) + " in " + GroupedInteger(merger.degraded()[m]) +
           " groups; its counts there are lower bounds (raise \"limit\" for exact counts)");
  }
  if (!path.empty()) note("result written to " + path);
  out.shards_failed = !loop.failures.empty();
  return out;
}

}  // namespace fanfold
