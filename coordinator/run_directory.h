// RunDirectory: the on-disk record of one run (layout: docs/run-directory.md)
//   run.json        RunManifest, written once at the start
//   journal.ndjson  append-only events (attempts, timings, failures), one JSON object a line
//   partials/       one persisted partial state per finished shard: shard-000042.ffp
//   result.<ext>    the output table, written at the end
//   summary.json    machine-readable summary, written at the end
//   lock            flock()ed while a coordinator works here
// Durability: partials are staged in temporary files and made durable in
// batches by Commit() — fsync each, rename into place, fsync the directory,
// then append and fdatasync the journal lines that say so. A shard counts as
// done only once its partial is committed; a coordinator killed at any
// instant leaves a directory `resume` can finish. Owned by the coordinator
// thread; not thread-safe.
#pragma once

#include <chrono>
#include <cstdint>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include "common/status.h"
#include "coordinator/run_manifest.h"

namespace fanfold {

class RunDirectory {
 public:
  ~RunDirectory();

  // What a path holds, for `run`'s refusal message.
  enum class State { kEmpty, kUnfinished, kFinished };
  static State Probe(const std::string& path);

  // Creates the directory (and parents), locks it and writes run.json.
  // REQUIRES: Probe(path) == kEmpty, or fresh == true (then an old run there
  // is removed first).
  static Result<std::unique_ptr<RunDirectory>> Create(const std::string& path, const RunManifest& manifest,
                                                      bool fresh);
  // Opens and locks an existing run directory; reads its manifest.
  static Result<std::unique_ptr<RunDirectory>> Open(const std::string& path, RunManifest* manifest);

  const std::string& path() const { return path_; }
  std::string PartialPath(uint32_t shard) const;

  // Writes shard's partial to a temporary file; Commit() makes it durable.
  Status StagePartial(uint32_t shard, std::string_view bytes);
  // Queues one journal line (a JSON object, no newline) for the next Commit.
  void StageJournal(std::string line);
  // True iff enough is staged (or staged long enough) to commit now.
  bool commit_due() const;
  // Makes everything staged durable, in the order described above.
  Status Commit();

  // Reads shard's committed partial (empty string iff there is none).
  Status LoadPartial(uint32_t shard, std::string* out) const;
  // Removes shard's committed partial (a corrupt or stale one).
  void DiscardPartial(uint32_t shard) const;

  // Atomically writes a file at the top of the run directory.
  Status WriteFile(const std::string& name, std::string_view data) const;

 private:
  RunDirectory(std::string path, int lock_fd);
  static Result<int> Lock(const std::string& path);

  std::string path_;
  int lock_fd_ = -1;
  struct Staged {
    uint32_t shard;
    std::string temp;
  };
  std::vector<Staged> staged_;
  std::vector<std::string> journal_lines_;
  std::chrono::steady_clock::time_point first_staged_;
};

}  // namespace fanfold
