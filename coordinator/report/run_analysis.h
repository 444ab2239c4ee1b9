// RunAnalysis: what `fanfold report` shows, computed once from a RunRecord —
// per session the worker lanes and throughput over time, the distribution
// of shard times with its stragglers, where the workers' time went, bad
// records per shard, failed shards, and the totals (from summary.json when
// the run finished, else added up from the journal). Also the short text
// summary for the terminal. Pure functions of the record; thread-safe.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "coordinator/rundir/run_record_reader.h"

namespace fanfold {

struct SessionView {
  size_t session = 0;              // index into RunRecord::sessions
  std::vector<size_t> attempts;    // indices into RunRecord::attempts
  int lanes = 1;                   // worker slots drawn
  uint64_t t0_ns = 0;              // the session's time origin
  double span_s = 0;               // seconds from t0 to the last attempt's end (or the finish)
  double bin_s = 0;                // throughput bin width
  std::vector<double> mb_per_s;    // decompressed MB/s per bin
  std::vector<double> records_per_s;
};

struct ShardTime {
  uint32_t shard = 0;
  double seconds = 0;  // the shard's successful attempt, start to end
  uint64_t records = 0;
  int worker = 0;
  bool straggler = false;
};

struct FailureView {
  uint32_t shard = 0;
  std::string path, reason;
  uint32_t attempts = 0;
};

struct RunTotals {
  bool from_summary = false;  // false: added up from the journal (unfinished run)
  uint64_t shards_total = 0, shards_done = 0, shards_failed = 0, shards_reused = 0, retries = 0;
  uint64_t records_read = 0, records_kept = 0, records_malformed = 0;
  uint64_t bytes_compressed = 0, bytes_decompressed = 0;
  double wall_seconds = 0;
  int workers = 0;
  // The last session's own work and time (a resume reuses the other
  // shards' partials, read by an earlier session): rates are over these.
  uint64_t processed_shards = 0, processed_records = 0, processed_bytes_decompressed = 0;
  double processed_seconds = 0;
};

// "0.41 s, 104.3 MB/s", or with reused shards "processed: 16.8 MB
// decompressed in 0.52 s, 32.3 MB/s" ("nothing processed, 0.05 s" when all
// were reused): the rate over the processed shards.
std::string ProcessedRateText(const RunTotals& totals);

struct RunAnalysis {
  RunTotals totals;
  std::vector<SessionView> sessions;
  std::vector<ShardTime> shard_times;  // done shards, by shard index
  // Type 7 quartiles (Hyndman & Fan 1996) of the shard times, and Tukey's
  // upper fence Q3 + 1.5 IQR (Tukey, Exploratory Data Analysis, 1977).
  double median_s = 0, q1_s = 0, q3_s = 0, fence_s = 0;
  std::vector<ShardTime> slowest;  // up to 8, slowest first
  size_t straggler_count = 0;
  uint64_t read_ns = 0, parse_ns = 0, aggregate_ns = 0, encode_ns = 0;  // all done attempts
  uint64_t done_attempts = 0;     // how many attempts those phases add up
  uint64_t phases_estimated = 0;  // of them, from journal lines of the time phases were estimates
  uint64_t attempts_ns = 0;       // their start-to-end times: what the phases should fill
  std::vector<std::pair<uint32_t, uint64_t>> malformed_by_shard;         // shards with any, by index
  std::vector<FailureView> failures;
  std::string status;  // "finished", "finished with failed shards", "interrupted", "unfinished"
};

// A straggler: above Tukey's upper fence, at least kStragglerMinRatio times
// the median, and at least kStragglerMinExcessS longer than the median (so
// that hundreds of sub-millisecond shards never flag one another).
inline constexpr double kStragglerMinRatio = 1.5;
inline constexpr double kStragglerMinExcessS = 0.02;

// The shard time above which a shard is a straggler (the largest of the three).
double StragglerThreshold(const RunAnalysis& a);

RunAnalysis AnalyzeRun(const RunRecord& record);

// Type 7 sample quantile of sorted values (Hyndman & Fan 1996); 0 if empty.
double QuantileType7(const std::vector<double>& sorted, double p);

// How the phase times were obtained, for the report: "measured; they fill
// 99.6% of the attempts' time" or, when older journal lines are among them,
// how many of the attempts' phases were estimates.
std::string PhasesProvenance(const RunAnalysis& analysis);

// One line per generation of a refreshed run ("generation 3, 2026-12-02
// 06:00:01 UTC: 743 reused, 1 computed, 0 dropped, 0.42 s; computed: h.ndjson"),
// at most `names` file names listed per line (then "+N more"); none for a
// run never refreshed.
std::vector<std::string> GenerationLines(const RunRecord& record, size_t names = 5);

// The terminal summary of `fanfold report`, one line per element.
std::vector<std::string> FormatReportText(const RunRecord& record, const RunAnalysis& analysis);

}  // namespace fanfold
