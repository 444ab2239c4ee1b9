#include "coordinator/cli/run_command.h"

#include <chrono>
#include <ctime>
#include <filesystem>
#include <iostream>

#include "common/job/job_loader.h"
#include "common/partial/partial_codec.h"
#include "common/port/file_identity.h"
#include "common/port/file_util.h"
#include "coordinator/output/output_extension.h"
#include "coordinator/run/console_log.h"
#include "coordinator/run/field_precheck.h"
#include "coordinator/rundir/run_directory.h"
#include "coordinator/rundir/stored_partial.h"
#include "coordinator/run/run_engine.h"

namespace fs = std::filesystem;

namespace fanfold {

namespace {

std::string NowIso() {
  std::time_t t = std::time(nullptr);
  char buf[32];
  std::strftime(buf, sizeof buf, "%Y-%m-%dT%H:%M:%SZ", std::gmtime(&t));
  return buf;
}

// Why a committed partial cannot be reused for shard s, or "" if it can.
std::string PartialProblem(const std::string& bytes, const Shard& s, const Plan& plan) {
  PartialHeader h;
  Status st = DecodePartialHeader(bytes, &h);
  if (!st.ok()) return st.message();
  return StoredPartialMismatch(h, s, plan.fingerprint);
}

// Whether the edited job file at m.job_path computes what the run's copy
// does — the same plan fingerprint and the same inputs — so that only what
// runs after the merge (rows, emit, shown_digits, about) differs. *why says
// why it cannot be used when it does not load at all.
bool OnlyAfterMergeChanged(const RunManifest& m, const std::string& copy_text, std::string* why) {
  Result<std::unique_ptr<Plan>> edited = LoadWorkerPlan(m.job_path, m.format, m.fingerprint);
  Result<JobSpec> before = ParseJobSpec(copy_text, m.job_path);
  if (!before.ok()) return false;
  if (!edited.ok()) {
    Result<JobSpec> spec = LoadJobSpec(m.job_path);
    RecordFormat f = RecordFormat::kNdjson;
    (void)FormatFromText(m.format, &f);
    if (!spec.ok()) *why = spec.status().message();
    else if (Result<std::unique_ptr<Plan>> plan = CompilePlan(std::move(spec.value()), f); !plan.ok())
      *why = plan.status().message();
    return false;
  }
  const JobSpec& a = (*edited)->spec;
  const JobSpec& b = before.value();
  return a.files == b.files && a.format == b.format && a.bad_record_limit == b.bad_record_limit &&
         a.chunk_bytes == b.chunk_bytes;
}

}  // namespace

std::string DefaultRunDir(const std::string& job_path) {
  return (fs::path("fanfold-runs") / fs::path(job_path).stem()).string();
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
  const std::string run_dir = o.run_dir.empty() ? DefaultRunDir(o.job_path) : o.run_dir;
  const std::string run_dir_abs = fs::absolute(run_dir).lexically_normal().string();
  RunDirectory::State state = RunDirectory::Probe(run_dir);
  if (state != RunDirectory::State::kEmpty && !o.fresh) {
    const bool finished = state == RunDirectory::State::kFinished;
    out.status = Status::InvalidArgument(
        "run directory '" + run_dir + "' already holds " + (finished ? "a finished run" : "an unfinished run") +
        (finished ? ". To write its result again: fanfold resume " : ". To finish it: fanfold resume ") + run_dir +
        " ; to start over: fanfold run " + o.job_path + " --fresh (or choose another --run-dir)");
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
  RunManifest manifest;
  Result<std::unique_ptr<RunDirectory>> dir =
      RunDirectory::Open(fs::absolute(given.run_dir).lexically_normal().string(), &manifest);
  if (!dir.ok()) {
    out.status = dir.status();
    return out;
  }
  RunOptions o = given;
  // A run directory of another partial-state format: its partials cannot be
  // read, and its plan fingerprint cannot match, but the job did not change.
  const int codec = PlanTextCodecVersion(manifest.plan_text);
  if (codec != kPartialFormatVersion) {
    out.status = Status::InvalidArgument(
        "cannot resume '" + o.run_dir + "': its run.json says its partial states are in format version " +
        (codec < 0 ? std::string("(none given)") : std::to_string(codec)) + ", and this fanfold reads version " +
        std::to_string(kPartialFormatVersion) + " only. Start a fresh run instead: fanfold run " +
        manifest.job_path + " --run-dir " + o.run_dir + " --fresh");
    return out;
  }
  if (o.max_attempts == kAttemptsOfTheRun) o.max_attempts = manifest.attempts;
  if (o.shard_time_limit_ms == kTimeLimitOfTheRun) o.shard_time_limit_ms = manifest.shard_time_limit_ms;
  // The run's own copy of the job file when it has one (run directories of
  // earlier versions do not): the original may have moved or changed.
  const std::string copy = (fs::path((*dir)->path()) / kJobCopyFile).string();
  std::string copy_text, original_text;
  const bool have_copy = ReadWholeFile(copy, &copy_text).ok();
  const bool have_original = have_copy && ReadWholeFile(manifest.job_path, &original_text).ok();
  std::string why;
  // An edit after the merge only (a new rows step, other output options)
  // applies to the saved partials as they are: the edited file becomes the copy.
  if (have_original && original_text != copy_text && OnlyAfterMergeChanged(manifest, copy_text, &why)) {
    out.status = (*dir)->WriteFile(kJobCopyFile, original_text);
    if (!out.status.ok()) return out;
    if (!o.quiet)
      std::cerr << "fanfold: the job file '" << manifest.job_path
                << "' changed only in what runs after the merge (rows, emit, shown_digits); resuming with it "
                   "and every saved partial (the run's copy '"
                << copy << "' updated)\n";
  } else if (have_copy && !o.quiet) {
    if (!have_original)
      std::cerr << "fanfold: the job file '" << manifest.job_path << "' is gone; resuming with the run's copy '"
                << copy << "'\n";
    else if (original_text != copy_text)
      std::cerr << "fanfold: the job file '" << manifest.job_path
                << "' changed since the run started; resuming with the run's copy '" << copy << "'"
                << (why.empty() ? "" : " (the edited file does not load: " + why + ")") << "\n";
  }
  // Relative paths in the job (lookup tables, emit.path) still mean the original's directory.
  Result<std::unique_ptr<Plan>> plan =
      LoadWorkerPlan(have_copy ? copy : manifest.job_path, manifest.format, manifest.fingerprint,
                     fs::path(manifest.job_path).parent_path().string(), manifest.plan_text);
  if (!plan.ok()) {
    out.status = Status::InvalidArgument("cannot resume '" + o.run_dir + "': " + plan.status().message() +
                                         ". Start a fresh run instead: fanfold run " + manifest.job_path +
                                         " --run-dir " + o.run_dir + " --fresh");
    return out;
  }
  out.status = ApplyOutputOption(o.output_path, &(*plan)->spec);
  if (!out.status.ok()) return out;
  RunInput in;
  in.plan = plan->get();
  in.shards = &manifest.shards;
  in.dir = dir->get();
  in.mode = "resume";
  // Only for the end-of-run suggestions: the run itself warned already.
  if (o.check_fields) in.names_seen = PrecheckFields(**plan, manifest.shards).names_seen;
  bool identities_changed = false;
  for (Shard& s : manifest.shards.shards) {
    std::string bytes;
    Status st = (*dir)->LoadPartial(s.index, &bytes);
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
      (*dir)->DiscardPartial(s.index);
      in.pending.push_back(s.index);
      continue;
    }
    if (now.size != s.file_size || now.mtime_ns != s.mtime_ns) {
      if (!o.quiet) std::cerr << "fanfold: shard " << s.index << " '" << s.path << "' changed since the run started; recomputing it\n";
      s.file_size = now.size;
      s.mtime_ns = now.mtime_ns;
      identities_changed = true;
      (*dir)->DiscardPartial(s.index);
      in.pending.push_back(s.index);
      continue;
    }
    if (bytes.empty()) {
      in.pending.push_back(s.index);
      continue;
    }
    std::string problem = PartialProblem(bytes, s, **plan);
    if (problem.empty()) {
      in.reused.push_back(s.index);
    } else {
      if (!o.quiet)
        std::cerr << "fanfold: warning: discarding the saved partial of shard " << s.index << " in '"
                  << (*dir)->PartialFile(s.index) << "' (" << problem << "); recomputing it\n";
      (*dir)->DiscardPartial(s.index);
      in.pending.push_back(s.index);
    }
  }
  if (identities_changed) {
    out.status = (*dir)->RewriteManifest(manifest);
    if (!out.status.ok()) return out;
  }
  if (!o.quiet)
    std::cerr << "fanfold: resuming " << o.run_dir << ": " << in.reused.size() << " shards saved, "
              << in.pending.size() << " to process\n";
  return ExecuteRun(in, o);
}

}  // namespace fanfold
