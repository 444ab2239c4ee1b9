// RunRecord: what a run directory says about its run, read back for
// `fanfold report` and `fanfold scale` — the manifest (job, plan, shards),
// every journal event (sessions and attempts with the workers' timings) and
// summary.json when the run finished. Layout: docs/run-directory.md. The
// reader tolerates a journal line cut short by a crash (the last one) and
// skips, with a warning, any other line that is not a journal event. Plain
// data; ReadRunRecord is thread-safe (no shared state).
#pragma once

#include <cstdint>
#include <map>
#include <string>
#include <vector>

#include "common/base/status.h"
#include "coordinator/rundir/run_journal.h"
#include "coordinator/rundir/run_manifest.h"

namespace fanfold {

// summary.json, when present.
struct SummaryRecord {
  bool present = false;
  std::string job, plan, output;
  int workers = 0;
  uint64_t shards_total = 0, shards_done = 0, shards_failed = 0, shards_reused = 0, retries = 0;
  uint64_t records_read = 0, records_kept = 0, records_malformed = 0;
  uint64_t bytes_compressed = 0, bytes_decompressed = 0;
  double wall_seconds = 0;
  // peak_rss_bytes (0 when the summary has none, or no worker ran).
  uint64_t peak_rss = 0, peak_worker_rss = 0;
  // This session's own work ("processed"; a resume reuses the rest), when
  // the summary has it (written since fanfold counts reused shards apart).
  bool has_processed = false;
  uint64_t processed_shards = 0, processed_records = 0, processed_bytes_decompressed = 0;
  struct Failed {
    uint32_t shard = 0;
    std::string path, reason;
    uint32_t attempts = 0;
  };
  std::vector<Failed> failed;
  struct Sample {
    uint32_t shard = 0;
    std::string path, reason;
    uint64_t line = 0;
  };
  std::vector<Sample> samples;
  std::map<std::string, uint64_t> skipped;  // per measure (a job of one unnamed reduction)
  // A job of several reductions: each one's part of the summary, in job order.
  struct Reduction {
    std::string name, result, output;
    uint64_t kept = 0;
    std::map<std::string, uint64_t> skipped;  // per measure
  };
  std::vector<Reduction> reductions;
};

struct RunRecord {
  std::string dir;  // absolute
  RunManifest manifest;
  // The sessions and attempts of the run's last generation only: an earlier
  // generation's shard indices name another shard list (a refresh re-sorts
  // it), so its attempts cannot be shown against this one.
  std::vector<RunSession> sessions;
  std::vector<AttemptEntry> attempts;  // journal order
  std::vector<GenerationEntry> generations;  // every generation, oldest first
  size_t earlier_sessions = 0;               // sessions of earlier generations, left out
  SummaryRecord summary;
  std::vector<std::string> warnings;  // lines skipped, a torn tail, ...

  // The shard's path, or "shard N" if the manifest lacks it.
  std::string ShardPath(uint32_t shard) const;
};

// Reads run.json, journal.ndjson and (if present) summary.json of dir.
// Fails iff run.json is missing or not a run manifest, or the journal
// cannot be read; a missing summary.json is not an error (unfinished run).
Result<RunRecord> ReadRunRecord(const std::string& dir);

// Parses journal text into record (sessions, attempts, warnings): the
// journal's reader (coordinator/rundir/run_journal.h) filling a RunRecord.
// Exposed for tests. `where` names the file in warnings.
void ParseJournal(const std::string& text, const std::string& where, RunRecord* record);
// Parses summary.json text into *out. Exposed for tests.
Status ParseSummary(const std::string& text, const std::string& where, SummaryRecord* out);

}  // namespace fanfold
