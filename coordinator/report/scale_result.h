// ScaleResult: what `fanfold scale` measured — wall times of the same job at
// several worker counts — and what follows from them: median and range,
// throughput, speedup S(p) = T(1)/T(p), parallel efficiency S/p, the
// Karp–Flatt experimentally determined serial fraction
// e = (1/S − 1/p)/(1 − 1/p) (Karp & Flatt 1990, CACM 33(5), 539–543), and
// the speedup bound that the shards' sizes allow. Encoded as JSON for
// `fanfold report --scale`. Plain data and pure functions; thread-safe.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "common/base/status.h"

namespace fanfold {

inline constexpr int kScaleFormatVersion = 1;

struct ScalePoint {
  int workers = 1;
  std::vector<double> wall_seconds;  // one per repeat, in run order
  // Derived by ComputeScaleDerived:
  double median_s = 0, min_s = 0, max_s = 0;
  double mb_per_s = 0;       // decompressed input MB (10^6 bytes) / median
  double records_per_s = 0;  // records read / median
  double speedup = 0;        // median T(1) / median T(p)
  double efficiency = 0;     // speedup / p
  std::optional<double> karp_flatt;  // p > 1 only
  double skew_bound = 0;     // the best speedup shard sizes allow at p
};

struct ScaleResult {
  std::string job;      // absolute path of the job file
  std::string fingerprint;  // JSON "plan": 16 hex digits; "" in files written before it was kept
  std::string created;  // ISO 8601 UTC
  unsigned cores = 0;   // std::thread::hardware_concurrency()
  int repeat = 1;
  uint64_t shards = 0;
  uint64_t bytes_compressed = 0, bytes_decompressed = 0, records = 0;
  bool identical_outputs = true;  // every run's result file byte-identical
  uint64_t output_bytes = 0;
  std::vector<double> shard_seconds;  // per shard index, 1-worker run (median over repeats)
  std::vector<ScalePoint> points;     // ascending workers; the first is 1
  std::vector<std::string> warnings;
};

// The middle value (mean of the two middle ones for an even count); 0 if empty.
double Median(std::vector<double> values);
// Karp–Flatt serial fraction for speedup s on p > 1 processors.
double KarpFlattSerialFraction(double speedup, int p);
// Speedup bound from shard-size skew: with per-shard times t_i, total T =
// Σ t_i, no schedule on p workers finishes before max(max t_i, T/p) (the
// lower bound on the makespan used in the analysis of Graham's LPT rule,
// Graham 1969, SIAM J. Appl. Math. 17(2)), so S(p) ≤ T / max(max t_i, T/p).
// Returns p when times are empty or all zero.
double SkewSpeedupBound(const std::vector<double>& shard_seconds, int p);

// Fills every derived field of every point from wall_seconds, the 1-worker
// point and shard_seconds. REQUIRES: points sorted, points[0].workers == 1,
// every point has at least one wall time.
void ComputeScaleDerived(ScaleResult* r);

// The aligned text table `fanfold scale` prints.
std::string FormatScaleTable(const ScaleResult& r);

std::string EncodeScaleJson(const ScaleResult& r);
// `where` names the file in errors; derived fields are recomputed.
Result<ScaleResult> DecodeScaleJson(const std::string& text, const std::string& where);

}  // namespace fanfold
