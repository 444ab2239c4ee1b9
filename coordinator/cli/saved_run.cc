#include "coordinator/cli/saved_run.h"

#include <ctime>
#include <filesystem>
#include <iostream>

#include "common/job/job_loader.h"
#include "common/partial/partial_codec.h"
#include "common/port/files/file_util.h"
#include "coordinator/rundir/stored_partial.h"

namespace fs = std::filesystem;

namespace fanfold {
namespace {

// Whether the edited job file at m.job_path computes what the run's copy
// does — the same plan fingerprint, and for kAfterMergeOnly the same inputs —
// so that every saved partial still holds. *why says why it cannot be used
// when it does not load at all.
bool EditKeepsPartials(const RunManifest& m, const std::string& copy_text, JobEdits edits, std::string* why) {
  Result<std::unique_ptr<Plan>> edited = LoadWorkerPlan(m.job_path, m.format, m.fingerprint);
  Result<JobSpec> before = ParseJobSpec(copy_text, m.job_path);
  if (!before.ok()) return false;
  if (!edited.ok()) {
    Result<JobSpec> spec = LoadJobSpec(m.job_path);
    RecordFormat f = RecordFormat::kNdjson;
    (void)FormatFromText(m.format, &f);
    if (!spec.ok())
      *why = spec.status().message();
    else if (Result<std::unique_ptr<Plan>> plan = CompilePlan(std::move(spec.value()), f); !plan.ok())
      *why = plan.status().message();
    return false;
  }
  const JobSpec& a = (*edited)->spec;
  const JobSpec& b = before.value();
  if (a.format != b.format || a.bad_record_limit != b.bad_record_limit) return false;
  // refresh expands the patterns again and matches shards by identity, so
  // new inputs or chunk sizes only decide which shards are reused.
  return edits == JobEdits::kSamePlan || (a.files == b.files && a.chunk_bytes == b.chunk_bytes);
}

}  // namespace

std::string NowIso() {
  std::time_t t = std::time(nullptr);
  char buf[32];
  std::strftime(buf, sizeof buf, "%Y-%m-%dT%H:%M:%SZ", std::gmtime(&t));
  return buf;
}

std::string PartialProblem(const std::string& bytes, const Shard& s, const Plan& plan) {
  PartialHeader h;
  Status st = DecodePartialHeader(bytes, &h);
  if (!st.ok()) return st.message();
  return StoredPartialMismatch(h, s, plan.fingerprint);
}

Result<SavedRun> OpenSavedRun(const RunOptions& given, const char* verb, JobEdits edits) {
  SavedRun run;
  Result<std::unique_ptr<RunDirectory>> dir =
      RunDirectory::Open(fs::absolute(given.run_dir).lexically_normal().string(), &run.manifest);
  if (!dir.ok()) return dir.status();
  run.dir = std::move(*dir);
  const RunManifest& manifest = run.manifest;
  RunOptions& o = run.options;
  o = given;
  // A run directory of another partial-state format: its partials cannot be
  // read, and its plan fingerprint cannot match, but the job did not change.
  const int codec = PlanTextCodecVersion(manifest.plan_text);
  if (codec != kPartialFormatVersion)
    return Status::InvalidArgument(std::string("cannot ") + verb + " '" + o.run_dir +
                                   "': its run.json says its partial states are in format version " +
                                   (codec < 0 ? std::string("(none given)") : std::to_string(codec)) +
                                   ", and this fanfold reads version " + std::to_string(kPartialFormatVersion) +
                                   " only. Start a fresh run instead: fanfold run " + manifest.job_path +
                                   " --run-dir " + o.run_dir + " --fresh");
  if (o.max_attempts == kAttemptsOfTheRun) o.max_attempts = manifest.attempts;
  if (o.shard_time_limit_ms == kTimeLimitOfTheRun) o.shard_time_limit_ms = manifest.shard_time_limit_ms;
  // The run's own copy of the job file when it has one (run directories of
  // earlier versions do not): the original may have moved or changed.
  const std::string copy = (fs::path(run.dir->path()) / kJobCopyFile).string();
  std::string copy_text, original_text;
  const bool have_copy = ReadWholeFile(copy, &copy_text).ok();
  const bool have_original = have_copy && ReadWholeFile(manifest.job_path, &original_text).ok();
  std::string why;
  const char* what_changed = edits == JobEdits::kSamePlan
                                 ? "in what the plan does not cover (inputs, rows, emit, shown_digits)"
                                 : "only in what runs after the merge (rows, emit, shown_digits)";
  // An edit that keeps every saved partial valid (a new rows step, other
  // output options; for refresh also new inputs) is adopted: the edited file
  // becomes the copy.
  if (have_original && original_text != copy_text && EditKeepsPartials(manifest, copy_text, edits, &why)) {
    FF_RETURN_IF_ERROR(run.dir->WriteFile(kJobCopyFile, original_text));
    if (!o.quiet)
      std::cerr << "fanfold: the job file '" << manifest.job_path << "' changed " << what_changed << "; "
                << (edits == JobEdits::kSamePlan ? "refreshing" : "resuming")
                << " with it and every saved partial that still fits (the run's copy '" << copy << "' updated)\n";
  } else if (have_copy && !o.quiet) {
    const char* ing = edits == JobEdits::kSamePlan ? "refreshing" : "resuming";
    if (!have_original)
      std::cerr << "fanfold: the job file '" << manifest.job_path << "' is gone; " << ing << " with the run's copy '"
                << copy << "'\n";
    else if (original_text != copy_text)
      std::cerr << "fanfold: the job file '" << manifest.job_path << "' changed since the run started; " << ing
                << " with the run's copy '" << copy << "'"
                << (why.empty() ? "" : " (the edited file does not load: " + why + ")") << "\n";
  }
  // Relative paths in the job (inputs, lookup tables, emit.path) still mean the original's directory.
  Result<std::unique_ptr<Plan>> plan =
      LoadWorkerPlan(have_copy ? copy : manifest.job_path, manifest.format, manifest.fingerprint,
                     fs::path(manifest.job_path).parent_path().string(), manifest.plan_text);
  if (!plan.ok())
    return Status::InvalidArgument(std::string("cannot ") + verb + " '" + o.run_dir + "': " + plan.status().message() +
                                   ". Start a fresh run instead: fanfold run " + manifest.job_path + " --run-dir " +
                                   o.run_dir + " --fresh");
  run.plan = std::move(*plan);
  return run;
}

}  // namespace fanfold
