#include "coordinator/cli/refresh_command.h"

#include <algorithm>
#include <filesystem>
#include <iostream>

#include "common/job/job_loader.h"
#include "common/port/clock.h"
#include "coordinator/cli/saved_run.h"
#include "coordinator/output/output_extension.h"
#include "coordinator/run/console_log.h"
#include "coordinator/run/field_precheck.h"
#include "coordinator/run/run_engine.h"
#include "coordinator/run/run_summary.h"
#include "coordinator/rundir/run_journal.h"
#include "coordinator/rundir/shard_matcher.h"

namespace fanfold {
namespace {

bool FileExists(const std::string& path) {
  std::error_code ec;
  return std::filesystem::exists(path, ec);
}

// The lowest slot above every slot of the manifest and every committed one
// (partials of dropped shards stay in their packs until compacted).
uint32_t FirstFreeSlot(const RunManifest& m, const RunDirectory& dir) {
  uint32_t next = dir.FirstUnusedSlot();
  for (uint32_t slot : m.AllSlots()) next = std::max(next, slot + 1);
  return next;
}

}  // namespace

CommandOutcome RefreshRun(const RunOptions& given) {
  CommandOutcome out;
  Result<SavedRun> saved = OpenSavedRun(given, "refresh", JobEdits::kSamePlan);
  if (!saved.ok()) {
    out.status = saved.status();
    return out;
  }
  RunDirectory& dir = *saved->dir;
  const RunManifest& before = saved->manifest;
  Plan& plan = *saved->plan;
  const RunOptions& o = saved->options;
  if (before.part.number != 0) {
    // A new expansion would be the whole list, and parts of a list that
    // changed no longer fit the other parts' cut.
    const std::string part = std::to_string(before.part.number) + "/" + std::to_string(before.part.count);
    out.status = Status::InvalidArgument("cannot refresh '" + o.run_dir + "': it holds part " + part +
                                         " of a job, and refresh cuts no parts. Run every part again (fanfold run " +
                                         before.job_path + " --part I/" + std::to_string(before.part.count) +
                                         " --run-dir DIR --fresh) and merge them");
    return out;
  }
  out.status = ApplyOutputOption(o.output_path, &plan.spec);
  if (!out.status.ok()) return out;
  Result<ShardList> now = ExpandShards(plan.spec);
  if (!now.ok()) {
    out.status = now.status().WithContext("cannot refresh '" + o.run_dir + "'");
    return out;
  }
  if (now->format != before.shards.format) {
    out.status = Status::InvalidArgument("cannot refresh '" + o.run_dir + "': the job's files are now " +
                                         FormatName(now->format) + ", the run's were " + before.format +
                                         ". Start a fresh run instead: fanfold run " + before.job_path + " --run-dir " +
                                         o.run_dir + " --fresh");
    return out;
  }
  ShardMatch match = MatchShards(before, *now, FirstFreeSlot(before, dir));
  RunManifest after = before;
  after.shards = std::move(*now);
  after.slots = match.slots;
  after.generation = before.generation + 1;

  RunInput in;
  in.plan = &plan;
  in.shards = &after.shards;
  in.dir = &dir;
  in.mode = "refresh";
  in.generation = after.generation;
  in.dropped = match.dropped.size();
  in.dropped_paths = match.dropped_paths;
  // The field check samples only the new and changed shards, before
  // anything is written: an edit of the output alone reads no shard at all.
  if (o.check_fields) {
    ShardList fresh;
    fresh.format = after.shards.format;
    for (const Shard& s : after.shards.shards)
      if (!match.kept[s.index]) fresh.shards.push_back(s);
    if (!fresh.shards.empty()) {
      FieldPrecheck fields = PrecheckFields(plan, fresh);
      if (!fields.error.ok()) {
        out.status = fields.error;
        return out;
      }
      for (const std::string& w : fields.warnings) LogWarning(w);
      in.names_seen = std::move(fields.names_seen);
    }
  }
  // Writing run.json first makes later reads map shards through its slots;
  // a refresh cut short after it is finished by `resume` or `refresh`.
  // summary.json goes before it: the directory then holds an unfinished run.
  out.status = dir.RemoveFile("summary.json");
  if (out.status.ok()) out.status = dir.RewriteManifest(after);
  if (!out.status.ok()) return out;
  for (const Shard& s : after.shards.shards) {
    if (!match.kept[s.index]) {
      in.pending.push_back(s.index);
      continue;
    }
    std::string bytes;
    out.status = dir.LoadPartial(s.index, &bytes);
    if (!out.status.ok()) return out;
    if (bytes.empty()) {  // an earlier session never committed it
      in.pending.push_back(s.index);
      continue;
    }
    if (std::string problem = PartialProblem(bytes, s, plan); !problem.empty()) {
      if (!o.quiet)
        std::cerr << "fanfold: warning: discarding the saved partial of shard " << s.index << " in '"
                  << dir.PartialFile(s.index) << "' (" << problem << "); recomputing it\n";
      dir.DiscardPartial(s.index);
      in.pending.push_back(s.index);
      continue;
    }
    in.reused.push_back(s.index);
  }
  GenerationEntry g;
  g.generation = after.generation;
  g.time_ns = WallNanos();
  g.reused = in.reused.size();
  g.computed = in.pending.size();
  g.dropped = match.dropped.size();
  for (uint32_t s : in.pending) g.computed_paths.push_back(after.shards.shards[s].path);
  g.computed_paths.erase(std::unique(g.computed_paths.begin(), g.computed_paths.end()), g.computed_paths.end());
  g.dropped_paths = match.dropped_paths;
  dir.StageJournal(GenerationEventLine(g));
  out.status = dir.Commit();
  if (!out.status.ok()) return out;
  if (!o.quiet) {
    for (const std::string& p : match.dropped_paths)
      std::cerr << "fanfold: '" << p << "' " << (FileExists(p) ? "no longer matches the job's inputs" : "is gone")
                << "; its shards are dropped from the run\n";
    std::cerr << "fanfold: refreshing " << o.run_dir << " (generation " << after.generation << "): " << in.reused.size()
              << " shards reused, " << in.pending.size() << " to compute, " << match.dropped.size() << " dropped\n";
  }
  out = ExecuteRun(in, o);
  if (!out.status.ok()) return out;
  // The partials of dropped and replaced shards go last, once the new
  // result is written: a kill during it costs nothing but the collection.
  Result<RunDirectory::Compaction> c = dir.Compact();
  if (!c.ok()) {
    LogWarning("could not collect the unused partials in '" + dir.path() + "/partials' (" + c.status().message() +
               "); the next refresh tries again");
    return out;
  }
  if (c->packs_removed > 0) {
    dir.StageJournal(
        CompactEventLine(WallNanos(), c->packs_removed, c->packs_rewritten, c->partials_copied, c->bytes_freed));
    if (Status s = dir.Commit(); !s.ok()) LogWarning(s.message());
    if (!o.quiet)
      LogInfo("unused partials collected: " + std::to_string(c->packs_removed) + " packs removed (" +
              std::to_string(c->packs_rewritten) + " of them rewritten with their " +
              std::to_string(c->partials_copied) + " live partials), " + Megabytes(c->bytes_freed) + " freed");
  }
  return out;
}

}  // namespace fanfold
