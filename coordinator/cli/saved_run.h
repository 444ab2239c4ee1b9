// SavedRun: what `resume` and `refresh` do first with an existing run
// directory — open and lock it, read run.json, refuse a directory of another
// partial-state format, pick the job file (the run's copy, or the edited
// original when its edit keeps every saved partial valid) and compile the
// plan against the run's fingerprint. Coordinator main thread only.
#pragma once

#include <memory>
#include <string>

#include "common/job/plan.h"
#include "common/base/status.h"
#include "coordinator/run/run_options.h"
#include "coordinator/rundir/run_directory.h"
#include "coordinator/rundir/run_manifest.h"

namespace fanfold {

struct SavedRun {
  std::unique_ptr<RunDirectory> dir;  // locked
  RunManifest manifest;
  std::unique_ptr<Plan> plan;         // its fingerprint is the manifest's
  RunOptions options;                 // given ones, the run's attempts and time limit filled in
};

// Which edits of the original job file the verb adopts.
enum class JobEdits {
  kAfterMergeOnly,  // resume: same plan and same inputs (rows, emit, shown_digits, about)
  kSamePlan,        // refresh: same plan; inputs may change (the shard list is expanded again)
};

// verb ("resume", "refresh") names the command in messages. Errors: another
// process holds the lock, not a run directory, another format version, a
// job copy that no longer compiles to the run's plan (each message says how
// to start afresh).
Result<SavedRun> OpenSavedRun(const RunOptions& given, const char* verb, JobEdits edits);

// Resolves a run.json's shards against what `refresh` and `resume` find:
// why the committed partial `bytes` cannot stand for shard s ("" iff it can).
std::string PartialProblem(const std::string& bytes, const Shard& s, const Plan& plan);

// "2026-12-01T17:00:00Z", now.
std::string NowIso();

}  // namespace fanfold
