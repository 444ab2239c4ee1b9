#include "coordinator/cli/run_command.h"

#include <chrono>
#include <ctime>
#include <filesystem>
#include <iostream>

#include "common/job/job_loader.h"
#include "common/partial/partial_codec.h"
#include "common/port/files/file_identity.h"
#include "common/port/files/file_util.h"
#include "coordinator/cli/saved_run.h"
#include "coordinator/output/output_extension.h"
#include "coordinator/run/console_log.h"
#include "coordinator/run/field_precheck.h"
#include "coordinator/run/memory_budget.h"
#include "coordinator/run/run_engine.h"
#include "coordinator/rundir/run_directory.h"
#include "coordinator/rundir/shard_parts.h"

namespace fs = std::filesystem;

namespace fanfold {

namespace {

// Why `run` refuses a run directory that holds a run, and what to do
// instead: the same plan is brought up to date with `refresh` (or finished
// with `resume`); another plan (or an unreadable run.json) only with --fresh.
std::string HeldRunText(const std::string& run_dir, RunDirectory::State state, const Plan& plan,
                        const std::string& job_path) {
  const bool finished = state == RunDirectory::State::kFinished;
  const std::string held =
      "run directory '" + run_dir + "' already holds " + (finished ? "a finished run" : "an unfinished run");
  const std::string fresh = "fanfold run " + job_path + " --fresh (or choose another --run-dir)";
  std::string text;
  Result<RunManifest> m = ReadWholeFile((fs::path(run_dir) / "run.json").string(), &text).ok()
                              ? DecodeManifest(text, (fs::path(run_dir) / "run.json").string())
                              : Result<RunManifest>(Status::IoError("run.json"));
  if (m.ok() && m->fingerprint == FingerprintHex(plan.fingerprint))
    return held +
           " of the same plan. To bring it up to date with the files the job's patterns match now: "
           "fanfold refresh " +
           run_dir +
           (finished ? " (or write its result again: fanfold resume " : " (or finish it as started: fanfold resume ") +
           run_dir + ")" + " ; to start over: " + fresh;
  if (m.ok()) {
    const std::string tables = ChangedLookupTables(m->plan_text, PlanCanonicalText(plan));
    return held + " of another plan (" +
           (tables.empty() ? "the job's filter, derived fields, groups or measures differ: plan " +
                                 FingerprintHex(plan.fingerprint) + ", the run's " + m->fingerprint
                           : tables + " changed") +
           "), so its partials cannot be reused. To start over: " + fresh;
  }
  return held + (finished ? ". To write its result again: fanfold resume " : ". To finish it: fanfold resume ") +
         run_dir + " ; to start over: " + fresh;
}

}  // namespace

std::string DefaultRunDir(const std::string& job_path) {
  return (fs::path("fanfold-runs") / fs::path(job_path).stem()).string();
}

std::string DefaultPartRunDir(const std::string& job_path, uint32_t number, uint32_t count) {
  return DefaultRunDir(job_path) + "-part-" + std::to_string(number) + "-of-" + std::to_string(count);
}

CommandOutcome RunJob(const RunOptions& o) {
  CommandOutcome out;
  Result<LoadedJob> job = LoadJob(o.job_path);
  if (!job.ok()) {
    out.status = job.status();
    return out;
  }
  out.status = ApplyOutputOption(o.output_path, &job->plan->spec);
  if (!out.status.ok()) return out;
  // A memory cap too small for the job stops it before the run directory
  // is made (the run checks again, with its merge threads).
  if (Result<MemoryShares> budget = ResolveMemoryCap(o.memory_cap, *job->plan); !budget.ok()) {
    out.status = budget.status();
    return out;
  }
  // A part: only its shards, indexed from 0; run.json says which part of
  // which full list they are.
  PartOfRun part;
  if (o.part_number != 0) {
    part.number = o.part_number;
    part.count = o.part_count;
    part.total_shards = static_cast<uint32_t>(job->shards.shards.size());
    part.list_digest = ShardListDigest(job->shards);
    uint32_t end = 0;
    PartRange(job->shards, PartNumber{o.part_number, o.part_count}, &part.first_shard, &end);
    std::vector<Shard> mine(job->shards.shards.begin() + part.first_shard, job->shards.shards.begin() + end);
    for (size_t i = 0; i < mine.size(); ++i) mine[i].index = static_cast<uint32_t>(i);
    job->shards.shards = std::move(mine);
  }
  const std::string run_dir = !o.run_dir.empty()       ? o.run_dir
                              : o.part_number != 0 ? DefaultPartRunDir(o.job_path, o.part_number, o.part_count)
                                                   : DefaultRunDir(o.job_path);
  const std::string run_dir_abs = fs::absolute(run_dir).lexically_normal().string();
  RunDirectory::State state = RunDirectory::Probe(run_dir);
  if (state != RunDirectory::State::kEmpty && !o.fresh) {
    out.status = Status::InvalidArgument(HeldRunText(run_dir, state, *job->plan, o.job_path));
    return out;
  }
  // A column missing from a header stops the run before it starts; a field
  // in none of the sampled records is only a warning (it may be rare).
  FieldPrecheck fields;
  if (o.check_fields) {
    fields = PrecheckFields(*job->plan, job->shards);
    if (!fields.error.ok()) {
      out.status = fields.error;
      return out;
    }
    for (const std::string& w : fields.warnings) LogWarning(w);
  }
  RunManifest manifest;
  manifest.job_path = fs::absolute(o.job_path).lexically_normal().string();
  manifest.format = FormatName(job->plan->format);
  manifest.fingerprint = FingerprintHex(job->plan->fingerprint);
  manifest.plan_text = PlanCanonicalText(*job->plan);
  manifest.created_utc = NowIso();
  manifest.attempts = o.max_attempts;
  manifest.shard_time_limit_ms = o.shard_time_limit_ms;
  manifest.shards = job->shards;
  manifest.part = part;
  Result<std::unique_ptr<RunDirectory>> dir = RunDirectory::Create(run_dir_abs, manifest, o.fresh);
  if (!dir.ok()) {
    out.status = dir.status();
    return out;
  }
  // A copy of the job file as compiled (not read again: it may have changed
  // since), so `resume` does not depend on the original staying put.
  out.status = (*dir)->WriteFile(kJobCopyFile, job->plan->spec.source_text);
  if (!out.status.ok()) return out;
  if (!o.quiet) std::cerr << "fanfold: run directory: " << run_dir << "\n";
  if (!o.quiet && part.number != 0)
    std::cerr << "fanfold: part " << part.number << " of " << part.count << ": shards " << part.first_shard << " to "
              << part.first_shard + job->shards.shards.size() << " (exclusive) of " << part.total_shards << "\n";
  RunInput in;
  in.plan = job->plan.get();
  in.shards = &job->shards;
  in.dir = dir->get();
  for (const Shard& s : job->shards.shards) in.pending.push_back(s.index);
  in.names_seen = std::move(fields.names_seen);
  return ExecuteRun(in, o);
}

CommandOutcome ResumeRun(const RunOptions& given) {
  CommandOutcome out;
  Result<SavedRun> saved = OpenSavedRun(given, "resume", JobEdits::kAfterMergeOnly);
  if (!saved.ok()) {
    out.status = saved.status();
    return out;
  }
  RunDirectory* dir = saved->dir.get();
  RunManifest& manifest = saved->manifest;
  const Plan& plan = *saved->plan;
  const RunOptions& o = saved->options;
  out.status = ApplyOutputOption(o.output_path, &saved->plan->spec);
  if (!out.status.ok()) return out;
  RunInput in;
  in.plan = &plan;
  in.shards = &manifest.shards;
  in.dir = dir;
  in.mode = "resume";
  in.generation = manifest.generation;
  // Only for the end-of-run suggestions: the run itself warned already.
  if (o.check_fields) in.names_seen = PrecheckFields(plan, manifest.shards).names_seen;
  bool identities_changed = false;
  for (Shard& s : manifest.shards.shards) {
    std::string bytes;
    Status st = dir->LoadPartial(s.index, &bytes);
    if (!st.ok()) {
      out.status = st;
      return out;
    }
    FileIdentity now;
    const bool exists = IdentifyFile(s.path, &now).ok();
    if (!exists) {
      // Never reuse a partial of a file that is gone: the shard is processed
      // again, fails on the missing file, and is listed with the reason.
      if (!o.quiet) std::cerr << "fanfold: shard " << s.index << " '" << s.path << "' is gone; it will fail\n";
      dir->DiscardPartial(s.index);
      in.pending.push_back(s.index);
      continue;
    }
    if (now.size != s.file_size || now.mtime_ns != s.mtime_ns) {
      if (!o.quiet)
        std::cerr << "fanfold: shard " << s.index << " '" << s.path
                  << "' changed since the run started; recomputing it\n";
      s.file_size = now.size;
      s.mtime_ns = now.mtime_ns;
      identities_changed = true;
      dir->DiscardPartial(s.index);
      in.pending.push_back(s.index);
      continue;
    }
    if (bytes.empty()) {
      in.pending.push_back(s.index);
      continue;
    }
    std::string problem = PartialProblem(bytes, s, plan);
    if (problem.empty()) {
      in.reused.push_back(s.index);
    } else {
      if (!o.quiet)
        std::cerr << "fanfold: warning: discarding the saved partial of shard " << s.index << " in '"
                  << dir->PartialFile(s.index) << "' (" << problem << "); recomputing it\n";
      dir->DiscardPartial(s.index);
      in.pending.push_back(s.index);
    }
  }
  if (identities_changed) {
    out.status = dir->RewriteManifest(manifest);
    if (!out.status.ok()) return out;
  }
  if (!o.quiet)
    std::cerr << "fanfold: resuming " << o.run_dir << ": " << in.reused.size() << " shards saved, " << in.pending.size()
              << " to process\n";
  return ExecuteRun(in, o);
}

}  // namespace fanfold
