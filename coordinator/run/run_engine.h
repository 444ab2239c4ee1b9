// ExecuteRun: the part of `run` and `resume` after the run directory is
// ready — merge the shards that already have committed partials, fan the
// pending ones out to workers (retrying and quarantining as needed),
// persist every partial and journal every attempt, then write the result,
// result copy and summary.json. SIGINT/SIGTERM stop it gracefully: no new
// shards, the journal committed, a hint on how to resume. RunEngine holds the
// steps, in the order Execute() takes them. Coordinator main thread only.
#pragma once

#include <chrono>
#include <cstdint>
#include <string>
#include <vector>

#include "common/job/plan.h"
#include "common/job/shard_list.h"
#include "common/port/signal_guard.h"
#include "coordinator/run/run_options.h"
#include "coordinator/output/output_table.h"
#include "coordinator/output/rows_step.h"
#include "coordinator/merge/spill_folder.h"
#include "coordinator/run/memory_budget.h"
#include "coordinator/run/merger.h"
#include "coordinator/run/run_loop.h"
#include "coordinator/run/run_summary.h"
#include "coordinator/rundir/run_directory.h"

namespace fanfold {

struct RunInput {
  const Plan* plan = nullptr;
  const ShardList* shards = nullptr;
  RunDirectory* dir = nullptr;
  std::vector<uint32_t> pending;  // shards to process
  std::vector<uint32_t> reused;   // shards whose committed partial is merged as it is
  const char* mode = "run";       // "run", "resume" or "refresh", for the journal
  uint32_t generation = 1;        // run.json's generation (1 until a refresh)
  // refresh: the shards of the previous list whose file is gone (their
  // count) and those files, for the notes and summary.json.
  uint64_t dropped = 0;
  std::vector<std::string> dropped_paths;
  // The data's field names from the sample taken before the run (may be
  // empty): the end-of-run warnings suggest the nearest ones.
  std::vector<std::string> names_seen;
};

CommandOutcome ExecuteRun(const RunInput& input, const RunOptions& options);

// What became of one reduction's result.
struct FinishedReduction {
  RowsStepCounts rows;      // what its rows step did
  std::string output_path;  // where its result went; "" = stdout
};

// One execution of a run. Constructing it installs the SIGINT/SIGTERM guard
// for its lifetime. REQUIRES: input, what it points to and options outlive it.
class RunEngine {
 public:
  RunEngine(const RunInput& input, const RunOptions& options);
  RunEngine(const RunEngine&) = delete;
  RunEngine& operator=(const RunEngine&) = delete;

  // Prepare, Reload, Run (which ends with Commit), Tally, then Stop if
  // interrupted, else WriteResult and Summarise; the first error ends it.
  // REQUIRES: called once.
  CommandOutcome Execute();

 private:
  // Takes the memory budget (refusing one too small for the job, before any
  // work), applies the test-only merge switch, and opens the merge's spill
  // folder in the run directory (removing one a killed run left).
  Status Budget();
  // Removes orphaned segments of dead coordinators (at every start, even
  // with nothing to process), lets the merger reload spilled partials from
  // the run directory, and picks the worker count (at most one per pending
  // shard, at least one).
  void Prepare();
  // Merges the committed partial of every reused shard, in the order given.
  Status Reload();
  // Journals the start; then, iff shards are pending, makes the transport and
  // the progress meter, runs the pending shards in dispatch order (journaling
  // each attempt, staging each partial, committing when due), shuts the
  // transport down and commits. Shard failures are in loop_, not the Status.
  Status Run();
  // Commits what the run staged even when it failed, so that finished shards
  // survive; returns the run's error first, else the commit's.
  Status Commit(const Status& run);
  // Adds the merger's late failures to loop_ and fills summary_.
  void Tally();
  // The merger's late failures not yet in loop_ added there; summary_'s
  // totals, samples, failures and spill figures set from the merger's
  // (again after the output stage: its last fold may drop a partial and
  // fold again).
  void TallyLateFailures();
  // After an interruption: journals it, commits, prints the summary lines and
  // how to resume. Returns the Interrupted status for the exit code.
  Status Stop();
  // Streams reduction r's result from the merge (rows step, emit.order and
  // emit.limit in the sort share of the memory budget) to result[-NAME].<ext>
  // in the run directory, then to its output (a file, or stdout: under a
  // title line when the reduction is named). Interrupted when a signal
  // arrived meanwhile (nothing half-written is left).
  Status WriteResult(size_t r);
  // Given written, what WriteResult returned: writes summary.json (iff written is
  // ok), journals the finish, and commits (iff all went well).
  Status Summarise(const Status& written);
  // The notes on stderr after a finished run: the summary lines, measures
  // that skipped values or ran past their limit, and where the result went.
  void PrintNotes() const;
  // The notes of reduction r: skipped values, its rows step, inexact groups.
  void PrintReductionNotes(size_t r) const;

  void Note(const std::string& line) const;  // an info line, unless quiet
  // -q hides the summary, but not what the exit status stands for: the failed
  // shards and why (and, when interrupted, what is saved and how to finish).
  void PrintQuietEssentials() const;
  double ElapsedSeconds() const;

  const RunInput& in_;
  const RunOptions& options_;
  const Plan& plan_;
  const ShardList& list_;
  RunDirectory& dir_;
  const std::chrono::steady_clock::time_point start_;
  SignalGuard signals_;      // installed until the engine is destroyed
  MemoryShares shares_;      // the memory budget's split (Budget)
  // The merge's spill files; declared before merger_ so that the runs in
  // it are released before the folder is removed, on every way out.
  std::unique_ptr<SpillFolder> spill_;
  Merger merger_;            // every shard's partial, in shard order
  int workers_ = 1;          // worker processes (Prepare)
  RunLoopResult loop_;       // failures, retries, interruption (Run, Tally)
  RunSummary summary_;       // what the summary lines and summary.json say (Tally)
  size_t late_tallied_ = 0;  // the merger's late failures already in loop_
  std::vector<FinishedReduction> finished_;  // per reduction (WriteResult)
  bool stdout_used_ = false;  // a result went to stdout already (WriteResult)
  uint64_t sort_bytes_ = 0;   // the output stage's share (Budget: the memory cap's, or the test-only switch)
};

}  // namespace fanfold
