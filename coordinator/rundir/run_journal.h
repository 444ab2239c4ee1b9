// RunJournal: the one home of journal.ndjson's schema — the events a
// coordinator appends (generation, start, attempt, interrupted, finish, compact; one JSON object a
// line, keys listed in docs/run-directory.md), how each line is written and
// how the journal is read back. Field names appear only in run_journal.cc.
// The coordinator writes (through RunDirectory::StageJournal); `report` and
// `scale` read. Pure functions; thread-safe.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "common/partial/partial_codec.h"

namespace fanfold {

// One try at one shard, as the dispatch loop (coordinator/run/run_loop)
// reports it and the journal records it.
struct AttemptRecord {
  uint32_t shard = 0;
  uint32_t attempt = 0;
  int worker = -1;
  std::string node;       // where the worker ran when not here (MPI: "rank 2 on node7"); "" = this machine
  uint64_t start_ns = 0;  // wall clock, ns since the Unix epoch
  uint64_t end_ns = 0;
  enum class Outcome { kDone, kFailed, kDied, kTimedOut, kRejected } outcome = Outcome::kDone;
  std::string message;          // failures: why
  bool final = true;            // false iff the shard will be retried
  PartialHeader header;         // kDone: counts and the worker's timings
};

// One "attempt" event of the journal, as read back.
struct AttemptEntry {
  uint32_t shard = 0;
  uint32_t attempt = 1;
  int worker = 0;
  std::string node;       // "" unless the run used MPI (then e.g. "rank 2 on node7")
  uint64_t start_ns = 0;  // wall clock, ns since the Unix epoch (coordinator)
  uint64_t end_ns = 0;
  std::string outcome;  // "done", "failed", "died", "timed-out", "rejected"
  bool final = true;    // false iff the shard was retried
  size_t session = 0;   // index into the sessions read with it
  // Done attempts only (zero otherwise), measured by the worker:
  uint64_t records = 0, kept = 0, malformed = 0;
  uint64_t bytes_in = 0, bytes_raw = 0;
  uint64_t read_ns = 0, parse_ns = 0, aggregate_ns = 0, encode_ns = 0;
  // True iff the line says the four phases were measured ("phases":
  // "measured"); journals of earlier versions hold estimates without it.
  bool phases_measured = false;
  std::string message;  // failures: why

  bool done() const { return outcome == "done"; }
  double seconds() const { return end_ns > start_ns ? static_cast<double>(end_ns - start_ns) / 1e9 : 0.0; }
};

// One coordinator's stint: a "start" event up to its "finish"/"interrupted".
struct RunSession {
  std::string mode = "run";  // "run", "resume" or "refresh"
  uint32_t generation = 1;   // of the last "generation" event before its start (1 if none)
  int workers = 0;
  uint64_t pending = 0, reused = 0;
  uint64_t start_ns = 0;
  uint64_t end_ns = 0;       // finish/interrupted time; 0 if the journal stops first
  bool interrupted = false;
  bool finished = false;
};

// One generation of a run: the first `run` is generation 1, each `refresh`
// starts the next ("generation" event). Written by `refresh`, read by `report`.
struct GenerationEntry {
  uint32_t generation = 1;
  uint64_t time_ns = 0;      // when it started (wall clock, ns since the Unix epoch)
  uint64_t end_ns = 0;       // the first "finish" after it; 0 if none (interrupted, or running)
  uint64_t reused = 0;       // shards whose committed partial was kept
  uint64_t computed = 0;     // shards new or changed, to compute
  uint64_t dropped = 0;      // shards of the previous list whose file is gone
  std::vector<std::string> computed_paths;  // their files (a cut file once); generation 1: none listed
  std::vector<std::string> dropped_paths;

  double seconds() const { return end_ns > time_ns ? static_cast<double>(end_ns - time_ns) / 1e9 : 0.0; }
};

// --- Writing: each returns one line, without its newline. ---

// A coordinator starts (or resumes) work: its mode ("run"/"resume"), pid,
// worker count, shards to run and shards reused from an earlier session.
std::string StartEventLine(const std::string& mode, int64_t pid, int workers, uint64_t pending, uint64_t reused,
                           uint64_t time_ns);
// One attempt at one shard. Done attempts carry the worker's counts and
// timings from the partial's header (and "phases":"measured"), the others
// their message. Written by
// hand, not through a json object: on thousands of tiny shards building
// that object cost more than the rest of the journal.
std::string AttemptEventLine(const AttemptRecord& r);
// A refresh starts generation g.generation (end_ns is not written).
std::string GenerationEventLine(const GenerationEntry& g);
// After a refresh: the partials no shard uses were collected
// (RunDirectory::Compact's counts).
std::string CompactEventLine(uint64_t time_ns, uint64_t packs_removed, uint64_t packs_rewritten,
                             uint64_t partials_copied, uint64_t bytes_freed);
// The session stopped on a signal.
std::string InterruptedEventLine(uint64_t time_ns);
// The run finished; `failed` shards were quarantined or rejected.
std::string FinishEventLine(uint64_t time_ns, uint64_t failed);

// --- Reading. ---

// Parses journal text into sessions and attempts (journal order). A crash
// can cut the last line short: it is ignored with a warning; any other line
// that is not an event is skipped with a warning naming `where` and its line.
// Unknown events (from a newer fanfold) are ignored.
void ParseJournal(const std::string& text, const std::string& where, std::vector<RunSession>* sessions,
                  std::vector<AttemptEntry>* attempts, std::vector<std::string>* warnings);

// The run's generations in journal order: generation 1 from the first
// "start" of mode "run" (its computed = that session's pending shards), then
// one per "generation" event; each ends at the first "finish" after it.
std::vector<GenerationEntry> ParseGenerations(const std::string& text);

// An attempt's fields under their journal names, every count present (zero
// when not done) and `message` iff not done: the base of `report --timings`.
nlohmann::json AttemptEntryJson(const AttemptEntry& a);

}  // namespace fanfold
