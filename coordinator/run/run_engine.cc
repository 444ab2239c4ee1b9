#include "coordinator/run/run_engine.h"

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <iostream>
#include <thread>
#include <unordered_set>


#include "common/base/byte_size.h"
#include "common/base/cell_text.h"
#include "common/port/clock.h"
#include "common/port/files/file_util.h"
#include "common/port/process_control.h"
#include "common/job/job_loader.h"
#include "coordinator/output/output_table.h"
#include "coordinator/output/rows_step.h"
#include "common/port/shm_segment.h"
#include "common/port/signal_guard.h"
#include "coordinator/run/console_log.h"
#include "coordinator/run/merger.h"
#include "coordinator/run/progress_meter.h"
#include "coordinator/run/result/result_stream.h"
#include "coordinator/run/run_loop.h"
#include "coordinator/run/run_summary.h"
#include "coordinator/run/summary_json.h"
#include "coordinator/run/test_only_switches.h"
#include "coordinator/run/run_warnings.h"
#include "coordinator/run/shard_scheduler.h"
#include "coordinator/run/transport_factory.h"
#include "coordinator/rundir/run_journal.h"
#include "coordinator/rundir/stored_partial.h"

namespace fanfold {
namespace {

std::string OutputPath(const RunOptions& o, const Plan& plan, size_t r) {
  if (!o.output_path.empty()) return o.output_path == "-" ? "" : o.output_path;
  const std::string& p = plan.spec.reductions[r].emit.path;
  if (p.empty()) return "";
  std::filesystem::path path(p);
  return path.is_absolute() ? p : (std::filesystem::path(plan.spec.base_dir) / path).string();
}

}  // namespace

CommandOutcome ExecuteRun(const RunInput& in, const RunOptions& o) { return RunEngine(in, o).Execute(); }

RunEngine::RunEngine(const RunInput& in, const RunOptions& o)
    : in_(in),
      options_(o),
      plan_(*in.plan),
      list_(*in.shards),
      dir_(*in.dir),
      start_(std::chrono::steady_clock::now()),
      merger_(&plan_, static_cast<uint32_t>(list_.shards.size())) {}

CommandOutcome RunEngine::Execute() {
  CommandOutcome out;
  out.status = Budget();
  if (!out.status.ok()) return out;
  Prepare();
  out.status = Reload();
  if (out.status.ok()) out.status = Run();
  if (!out.status.ok()) return out;
  Tally();
  if (loop_.interrupted) {
    out.status = Stop();
    return out;
  }
  Status written = Status::Ok();
  finished_.resize(plan_.reductions.size());
  // One reduction at a time, each streamed from the merge to its files.
  for (size_t r = 0; r < plan_.reductions.size() && written.ok(); ++r) written = WriteResult(r);
  if (written.code() == Status::Code::kInterrupted) {
    dir_.StageJournal(InterruptedEventLine(WallNanos()));
    (void)dir_.Commit();
    Note("interrupted while writing the result; finished shards are saved. To finish the run: fanfold resume " +
         dir_.path());
    out.status = written;
    return out;
  }
  out.status = Summarise(written);
  if (!out.status.ok()) return out;
  PrintNotes();
  out.shards_failed = !loop_.failures.empty();
  return out;
}

void RunEngine::Prepare() {
  ShmSegment::RemoveStaleSegments();
  merger_.SetReloader([this](uint32_t shard, std::string* out) {
    Status s = dir_.LoadStagedOrCommitted(shard, out);
    if (s.ok() && out->empty()) s = Status::Internal("no saved partial for shard " + std::to_string(shard));
    return s;
  });
  // A partial's walk over the tables runs beside the next one's reading
  // and decompression (coordinator/run/merger.h).
  merger_.SetOverlap(true);
  merger_.SetOpener([this](uint32_t shard) -> Result<std::unique_ptr<StoredPartialBytes>> {
    RunDirectory::StoredSpan span;
    FF_RETURN_IF_ERROR(dir_.LocateStagedOrCommitted(shard, &span));
    if (span.path.empty() && span.bytes.empty())
      return Status::Internal("no saved partial for shard " + std::to_string(shard));
    if (span.path.empty()) return StoredPartialBytes::InMemory(std::move(span.bytes));
    std::unique_ptr<ReadableFile> file;
    if (OsError e = dir_.platform().OpenForRead(span.path, &file); !e.ok()) return e.ToStatus("open", span.path);
    return StoredPartialBytes::InFile(std::move(file), span.path, span.offset, span.length);
  });
  const int asked = options_.workers > 0 ? options_.workers
                                         : static_cast<int>(std::max(1u, std::thread::hardware_concurrency()));
  workers_ = std::max(1, std::min<int>(asked, static_cast<int>(in_.pending.size())));
}

Status RunEngine::Budget() {
  FF_RETURN_IF_ERROR(ApplyTestOnlyMergeThreads(&merger_));  // first: it resets the runs' key ranges too
  Result<bool> straight = TestOnlyStraightFold();
  if (!straight.ok()) return straight.status();
  // The last fold waits for the output stage, which folds it straight
  // into its rows when it can (docs/streaming-merge.md).
  merger_.SetDeferLastFold(*straight);
  size_t threads = merger_.run_threads();
  FF_RETURN_IF_ERROR(ApplyTestOnlyMergeRuns(&merger_, &threads));
  // The cap must hold one key range's buffers; the runs' fold takes as many
  // ranges (up to the merge threads) as the merge share holds (the bytes do
  // not depend on the number of ranges).
  Result<MemoryShares> shares = ResolveMemoryCap(options_.memory_cap, plan_, 1);
  if (!shares.ok()) return shares.status();
  shares_ = *shares;
  while (threads > 1 && MinimumMergeBytes(plan_, threads) > shares_.merge_bytes) --threads;
  merger_.LimitRunThreads(threads);
  Result<uint64_t> sort_bytes = TestOnlySortBytes(shares_.sort_bytes);
  if (!sort_bytes.ok()) return sort_bytes.status();
  sort_bytes_ = *sort_bytes;
  Result<std::unique_ptr<SpillFolder>> spill =
      SpillFolder::Open((std::filesystem::path(dir_.path()) / SpillFolder::kName).string());
  if (!spill.ok()) return spill.status();
  spill_ = std::move(*spill);
  merger_.SetMemory(MergeMemory{shares_.merge_bytes, spill_.get()});
  LogDebug("memory cap " + ByteSizeText(shares_.cap) + " from " + shares_.source + ": merge " +
           ByteSizeText(shares_.merge_bytes) + ", output " + ByteSizeText(shares_.sort_bytes) + ", worker table " +
           ByteSizeText(shares_.worker_table_bytes));
  return Status::Ok();
}

Status RunEngine::Reload() {
  for (uint32_t s : in_.reused) {
    std::string bytes;
    PartialHeader h;
    Status st = dir_.LoadPartial(s, &bytes);
    if (st.ok()) st = DecodePartialHeader(bytes, &h);  // checksum included
    // A partial reused by `refresh` was computed when its shard had another
    // index; its identity, checked here, is what ties it to shard s, so the
    // merger (which checks the index) is handed its header with s's index.
    if (st.ok())
      if (std::string why = StoredPartialMismatch(h, list_.shards[s], plan_.fingerprint); !why.empty())
        st = Status::Corrupt(why);
    h.shard_index = s;
    if (st.ok()) st = merger_.Add(s, std::move(bytes), &h);
    if (!st.ok()) return st.WithContext("reading the committed partial of shard " + std::to_string(s));
  }
  return Status::Ok();
}

Status RunEngine::Run() {
  Result<std::unique_ptr<Transport>> transport = std::unique_ptr<Transport>();
  if (!in_.pending.empty())
    transport = MakeTransport(plan_, options_, workers_, (std::filesystem::path(dir_.path()) / "partials").string());
  // The transport's own count: under MPI, every agent's workers together.
  if (transport.ok() && *transport) workers_ = (*transport)->worker_count();
  dir_.StageJournal(
      StartEventLine(in_.mode, CurrentPid(), workers_, in_.pending.size(), in_.reused.size(), WallNanos()));
  if (in_.pending.empty()) return Status::Ok();
  if (!transport.ok()) return transport.status();
  Result<std::vector<uint32_t>> all = DispatchOrder(list_.shards, workers_);
  if (!all.ok()) return all.status();
  std::unordered_set<uint32_t> pending(in_.pending.begin(), in_.pending.end());
  std::vector<uint32_t> order;
  for (uint32_t s : *all)
    if (pending.count(s)) order.push_back(s);
  ProgressMeter meter(options_.quiet ? ProgressMode::kOff : options_.progress, options_.progress_every_s, list_,
                      order);
  RunLoopOptions lo;
  Result<uint64_t> table_bytes = TestOnlyWorkerTableBytes();
  if (!table_bytes.ok()) return table_bytes.status();
  lo.worker_table_bytes = *table_bytes > 0 ? *table_bytes : shares_.worker_table_bytes;
  lo.max_attempts = options_.max_attempts;
  lo.shard_time_limit_ms = options_.shard_time_limit_ms;
  lo.should_stop = [] { return SignalGuard::interrupted(); };
  lo.on_attempt = [&](const AttemptRecord& r) {
    if (r.outcome == AttemptRecord::Outcome::kDone) {
      ProcessedTotals& p = summary_.processed;
      ++p.shards;
      p.records += r.header.records;
      p.compressed_bytes += r.header.compressed_bytes;
      p.raw_bytes += r.header.raw_bytes;
    }
    dir_.StageJournal(AttemptEventLine(r));
    meter.OnAttempt(r);
  };
  lo.on_partial = [&](uint32_t shard, const std::string& bytes) { return dir_.StagePartial(shard, bytes); };
  lo.on_idle = [&]() {
    meter.Tick();
    return dir_.commit_due() ? dir_.Commit() : Status::Ok();
  };
  Status s = RunShards(list_, order, **transport, merger_, lo, &loop_);
  merger_.WaitForMerges();  // an interrupted run counts its waiting batch and last walk too
  meter.Finish();
  (*transport)->Shutdown();
  return Commit(s);
}

Status RunEngine::Commit(const Status& run) {
  Status c = dir_.Commit();
  return run.ok() ? c : run;
}

void RunEngine::Tally() {
  if (const RunResults* runs = merger_.runs())
    LogDebug(std::string("merge: the results were folded as sorted runs (docs/streaming-merge.md), ") +
             std::to_string(runs->folds() + (merger_.last_fold_pending() ? 1 : 0)) + " folds" +
             (merger_.last_fold_pending() ? " (the last one left for the output stage)" : "") +
             (spill_->bytes_written() > 0 ? ", " + ByteSizeText(spill_->bytes_written()) + " written to spill files"
                                          : ", in memory"));
  LogDebug("merge: coordinator peak RSS before the output stage: " +
           std::to_string(PeakRssBytes() >> 20) + " MiB");
  TallyLateFailures();
  summary_.shards_total = list_.shards.size();
  summary_.interrupted = loop_.interrupted;
  summary_.shards_reused = in_.reused.size();
  summary_.wall_seconds = ElapsedSeconds();
  summary_.peak_rss = PeakRssBytes();
  summary_.peak_worker_rss = PeakChildRssBytes();
  summary_.memory_cap = shares_.cap;
  summary_.memory_cap_from = shares_.source;
}

void RunEngine::TallyLateFailures() {
  const auto& late = merger_.late_failures();
  for (; late_tallied_ < late.size(); ++late_tallied_)
    loop_.failures.push_back({late[late_tallied_].first, list_.shards[late[late_tallied_].first].path,
                              late[late_tallied_].second, 1});
  summary_.totals = merger_.totals();
  summary_.samples = merger_.malformed_samples();
  summary_.failures = loop_.failures;
  summary_.merge_spilled_bytes = spill_->bytes_written();
  summary_.merge_held = !merger_.in_runs()                ? "tables"
                        : summary_.merge_spilled_bytes > 0 ? "spilled runs"
                                                           : "runs in memory";
}

Status RunEngine::Stop() {
  dir_.StageJournal(InterruptedEventLine(WallNanos()));
  (void)dir_.Commit();
  summary_.shards_saved = dir_.saved_shard_count();
  for (const auto& line : FormatRunSummary(summary_, list_)) Note(line);
  Note("interrupted; finished shards are saved. To finish the run: fanfold resume " + dir_.path());
  PrintQuietEssentials();
  return Status::Interrupted("run interrupted by signal " + std::to_string(SignalGuard::signal_number()));
}

Status RunEngine::WriteResult(size_t r) {
  const ReductionPlan& plan = plan_.reductions[r];
  const ReductionSpec& spec = plan_.spec.reductions[r];
  ResultStreamTargets t;
  t.platform = &dir_.platform();
  t.run_dir_file = (std::filesystem::path(dir_.path()) / ResultFileName(spec.name, spec.emit.format)).string();
  t.spill_dir = (std::filesystem::path(dir_.path()) / SpillFolder::kName).string();
  t.sort_bytes = sort_bytes_;
  t.should_stop = [] { return SignalGuard::interrupted(); };
  t.shown = !options_.results_in_run_dir_only;
  t.shown_path = OutputPath(options_, plan_, r);
  // --digits wins over everything; else a measure's shown_digits over emit.digits.
  t.shown_options.digits = options_.digits > 0 ? options_.digits : spec.emit.digits;
  if (options_.digits == 0) {
    t.shown_options.column_digits.assign(plan.group_columns.size(), 0);
    for (size_t m = 0; m < plan.measures.size(); ++m)
      t.shown_options.column_digits.insert(t.shown_options.column_digits.end(), plan.measures[m].columns.size(),
                                           spec.measures[m].shown_digits);
    for (const AddedColumn& a : plan.rows.add) t.shown_options.column_digits.push_back(a.shown_digits);
  }
  // Named reductions on stdout, one after another, each under its title.
  if (t.shown && t.shown_path.empty() && !spec.name.empty())
    t.stdout_title = (stdout_used_ ? "\n== " : "== ") + spec.name + " ==\n";
  if (t.shown && t.shown_path.empty()) stdout_used_ = true;
  finished_[r].output_path = t.shown ? t.shown_path : t.run_dir_file;
  const double began = ElapsedSeconds();
  Result<ResultStreamOutcome> done = WriteResultStream(merger_, plan_, r, t);
  // A last fold that found a bad partial mid-walk folded again without
  // it: its shard is a late failure and the totals changed.
  TallyLateFailures();
  if (!done.ok()) return done.status();
  if (done->refolded)
    LogDebug("output: reduction " + std::to_string(r) +
             ": the last fold found a partial bad while writing; folded again without it, and written again");
  finished_[r].rows = done->rows;
  char took[32];
  std::snprintf(took, sizeof took, "%.3f", ElapsedSeconds() - began);
  LogDebug("output: reduction " + std::to_string(r) + ": " + std::to_string(done->rows_written) + " rows written in " +
           took + " s, ordered " +
           (done->streamed     ? std::string("as the merge walked them (no sort)") +
                                     (done->straight ? ", the last fold straight into them" : "")
            : done->sort_files > 0 ? "through " + std::to_string(done->sort_files) + " sort files"
                                   : std::string("in memory")) +
           " (sort budget " + std::to_string(sort_bytes_) + " bytes" +
           (done->out_of_order_at > 0 ? "; row " + std::to_string(done->out_of_order_at) + " came out of order" : "") +
           ")");
  return Status::Ok();
}

Status RunEngine::Summarise(const Status& written) {
  Status w = written;
  summary_.wall_seconds = ElapsedSeconds();
  // Again after the merge's tables were finished and rendered, which can
  // be the coordinator's peak.
  summary_.peak_rss = PeakRssBytes();
  if (w.ok()) {
    w = dir_.WriteFile("summary.json", SummaryJsonText(in_, summary_, merger_, finished_, workers_, loop_.retries));
  }
  dir_.StageJournal(FinishEventLine(WallNanos(), loop_.failures.size()));
  if (w.ok()) w = dir_.Commit();
  return w;
}

void RunEngine::PrintNotes() const {
  for (const auto& line : FormatRunSummary(summary_, list_)) Note(line);
  if (in_.dropped > 0) {
    std::string files;
    for (const std::string& p : in_.dropped_paths) files += (files.empty() ? "'" : ", '") + p + "'";
    Note("dropped " + GroupedInteger(in_.dropped) + (in_.dropped == 1 ? " shard" : " shards") +
         " (files gone or no longer matched by the job's inputs): " + files);
  }
  PrintQuietEssentials();
  const MergeTotals& totals = merger_.totals();
  for (size_t i = 0; i < plan_.lookups.size() && totals.lookup_counts_known; ++i) {
    const uint64_t looked_up = totals.records - std::min(totals.records, totals.malformed);
    Note("lookup table \"" + plan_.lookups[i].name + "\" (" + GroupedInteger(plan_.lookups[i].table->row_count()) +
         " rows): " + GroupedInteger(totals.lookup_unmatched[i]) + " of " + GroupedInteger(looked_up) +
         " records found no row");
  }
  for (size_t r = 0; r < plan_.reductions.size(); ++r) PrintReductionNotes(r);
  for (const RunWarning& w : EndOfRunWarnings(plan_, merger_.totals(), in_.names_seen)) LogWarning(w.text);
  for (const FinishedReduction& f : finished_)
    if (!f.output_path.empty()) Note("result written to " + f.output_path);
}

void RunEngine::PrintReductionNotes(size_t r) const {
  const ReductionPlan& plan = plan_.reductions[r];
  const RowsStepCounts& rows = finished_[r].rows;
  // "measure "x" of reduction "daily"" when the job has named reductions.
  const std::string of = plan.name.empty() ? "" : " of reduction \"" + plan.name + "\"";
  for (size_t m = 0; m < plan.measures.size(); ++m) {
    if (merger_.skipped(r)[m] > 0)
      Note("measure \"" + plan.measures[m].name + "\"" + of + " skipped " + GroupedInteger(merger_.skipped(r)[m]) +
           " values that were missing, null or not usable");
  }
  for (size_t i = 0; i < plan.rows.add.size(); ++i) {
    if (rows.no_value[i] > 0)
      Note("column \"" + plan.rows.add[i].name + "\"" + of + " has no value in " + GroupedInteger(rows.no_value[i]) +
           (rows.no_value[i] == 1 ? " row" : " rows") + " (a column it reads had none, or a division by zero)");
  }
  if (plan.rows.keep)
    Note("rows.keep" + of + " kept " + GroupedInteger(rows.rows_in - rows.rows_dropped) + " of " +
         GroupedInteger(rows.rows_in) + " result rows");
  for (size_t m = 0; m < plan.measures.size(); ++m) {
    if (merger_.degraded(r)[m] > 0)
      Note("warning: measure \"" + plan.measures[m].name + "\"" + of + " saw more distinct values than its limit of " +
           std::to_string(plan.measures[m].config.limit) + " in " + GroupedInteger(merger_.degraded(r)[m]) +
           " groups; its counts there are lower bounds (raise \"limit\" for exact counts)");
  }
}

void RunEngine::PrintQuietEssentials() const {
  // The exit status (1 or 130) says something went wrong; -q still says what
  // (unless --log-level off).
  if (!options_.quiet || CurrentLogLevel() > LogLevel::kError) return;
  if (loop_.interrupted)
    WriteConsoleLine("fanfold: interrupted: " + std::to_string(summary_.shards_saved) + " of " +
                     std::to_string(summary_.shards_total) + " shards saved, " + std::to_string(loop_.failures.size()) +
                     " failed");
  for (const auto& f : loop_.failures)
    WriteConsoleLine("fanfold: shard " + std::to_string(f.shard) + " '" + f.path + "' failed: " + f.message);
  if (loop_.interrupted) WriteConsoleLine("fanfold: to finish the run: fanfold resume " + dir_.path());
}

void RunEngine::Note(const std::string& line) const {
  if (!options_.quiet) LogInfo(line);
}

double RunEngine::ElapsedSeconds() const {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - start_).count();
}

}  // namespace fanfold
