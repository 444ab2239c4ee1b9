// Measure: the mergeable state behind one named result column (count, sum,
// mean, quantiles, distinct counts, top-k, at_lowest/at_highest ...). A worker makes one
// state per group per measure, feeds it records with Add(), encodes it into
// the shard's partial state; the coordinator decodes states and folds them in
// shard order with Merge(), then Finalize()s. Merging is associative, so any
// split of the input gives the same result (exactly for exact measures,
// within the documented bound for sketches). States are single-threaded.
//
// Values that a numeric measure cannot use (missing, null, non-numeric text)
// are skipped and counted in skipped(); the run summary reports the totals.
#pragma once

#include <cmath>
#include <cstdint>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include "common/base/byte_io.h"
#include "common/base/cell.h"
#include "common/base/status.h"
#include "common/base/value.h"

namespace fanfold {

enum class MeasureKind : uint8_t {
  kCount = 1,           // records in the group; no argument
  kCountPresent,        // records whose argument is present (not missing/null)
  kSum,                 // Neumaier-compensated sum
  kMean,                // Welford; merge by Chan-Golub-LeVeque
  kVariance,            // sample variance (n-1)
  kStddev,              // sample standard deviation (n-1)
  kMin,
  kMax,
  kQuantile,            // exact, Hyndman & Fan type 7; keeps values up to `limit`
  kDdSketch,            // DDSketch with relative accuracy alpha
  kDistinct,            // exact distinct count; keeps values up to `limit`
  kHyperLogLog,         // HyperLogLog with 2^precision registers
  kTop,                 // the k most frequent values with their counts
  kAtLowest,            // value at the smallest ordering key
  kAtHighest,           // value at the largest ordering key
  kHistogram,           // counts per fixed bin, below and above the range
};

// Everything a state needs to know about its measure; filled by the job
// parser (which validates ranges) and part of the plan fingerprint. Each
// field but `kind` is an option with its row in kMeasureOptions
// (common/measures/measure_options.h); a static_assert there enforces it.
struct MeasureConfig {
  MeasureKind kind = MeasureKind::kCount;
  std::vector<double> probabilities;  // kQuantile, kDdSketch: each in [0, 1]
  double alpha = 0.01;                // kDdSketch: relative accuracy, [0.001, 0.5]
  int precision = 12;                 // kHyperLogLog: register bits, 4..18 (2^p bytes per group)
  uint32_t k = 10;                    // kTop: how many values to report, >= 1
  uint64_t limit = 1'000'000;         // kQuantile, kDistinct: values kept per group; kTop: distinct values tracked
  // kHistogram: the bins, either by edges (2 to 257, strictly increasing)
  // or by from/to/width (see common/measures/histogram_bins.h). Unset is
  // empty / NaN: a JSON number is never NaN, so unset cannot be written.
  std::vector<double> edges;
  double from = std::nan("");
  double to = std::nan("");
  double width = std::nan("");
};

// The number a numeric measure reads from v: returns true iff v gives one
// that is not NaN (*x set); otherwise counts one skipped value. The one
// home of the "which values are used" rule of docs/measures.md.
inline bool UsableNumber(const Value& v, double* x, uint64_t* skipped) {
  if (v.AsNumber(x) && !std::isnan(*x)) return true;
  ++*skipped;
  return false;
}

// The exact number a numeric measure reads from v (Value::AsNumeric: an
// integer, also from integer text, stays exact): returns true iff v gives
// one that is not NaN (*x set to a kNumber); otherwise counts one skipped
// value. The same values are used as by UsableNumber.
inline bool UsableNumeric(const Value& v, Value* x, uint64_t* skipped) {
  if (v.AsNumeric(x) && !std::isnan(x->number)) return true;
  ++*skipped;
  return false;
}

class MeasureState {
 public:
  virtual ~MeasureState() = default;

  // Feeds one record. args holds the evaluated arguments: none for kCount,
  // [value] for most, [value, ordering key] for kAtLowest/kAtHighest.
  // Returns false iff a bounded measure has just exceeded its limit; the
  // state is then unusable and the caller fails the shard.
  virtual bool Add(const Value* args) = 0;

  // Folds `other` (same config, possibly from another shard) into this state.
  // `other` is the later input: order-sensitive measures (at_lowest/at_highest ties)
  // keep this state's value on ties. Fails with LimitExceeded past a bound.
  virtual Status Merge(const MeasureState& other) = 0;

  // Appends this state's encoding (see docs/partial-state.md).
  virtual void Encode(ByteWriter& w) const = 0;
  // Replaces this state with one read from r. Fails (never crashes) on
  // corrupt input.
  virtual Status Decode(ByteReader& r) = 0;

  // Reads one encoded state (Encode's bytes, from a later shard) from r
  // and, iff apply, folds it into this state: the same result as Decode into
  // a fresh state followed by Merge, but without building that state, which
  // is what makes the coordinator's merge fast. With apply false it only
  // checks the bytes and leaves this state as it was. `scratch` is a state of
  // the same config, the default implementation's Decode target (it may be
  // this state itself when only checking); overrides may ignore it. Fails
  // on corrupt bytes (this state then unchanged), or when applying as Merge
  // does.
  virtual Status MergeEncoded(ByteReader& r, bool apply, MeasureState* scratch);

  // A hint only: asks the CPU to start loading the memory that a later
  // MergeEncoded(encoded) of this state will touch (a sketch's registers or
  // buckets), so a merge over many groups can overlap those cache misses
  // (common/partial/group_table.cc). Reads at most framing from `encoded`,
  // which may be anything (it is checked by MergeEncoded, not here); never
  // changes the state or fails. The default does nothing.
  virtual void PrefetchMerge(std::string_view /*encoded*/) const {}

  // Appends one cell per output column (see OutputColumnCount()).
  virtual void Finalize(std::vector<Cell>* out) const = 0;

  // Arguments fed that the measure could not use.
  virtual uint64_t skipped() const = 0;

  // True iff the result is no longer exact where the measure promises
  // exactness while within its bound (top past `limit`: counts become lower
  // bounds). The run summary says so instead of staying silent.
  virtual bool degraded() const { return false; }
};

// The three below read the kind's row (common/measures/measure_registry.h).
// Returns a new empty state for config. REQUIRES: config validated.
std::unique_ptr<MeasureState> NewMeasureState(const MeasureConfig& config);

// Number of arguments Add() expects for kind (0, 1 or 2).
int MeasureArgCount(MeasureKind kind);

// True iff kind's measure reads its argument `arg` (0-based) as a number
// (Value::AsNumber or AsNumeric): the argument whose text is worth
// reading once as a number (Value::ReadTextNumber) before the measure
// takes it. A hint only: a measure gives the same result either way.
bool MeasureReadsNumber(MeasureKind kind, size_t arg);

// Number of cells Finalize() appends (the row's output columns).
size_t OutputColumnCount(const MeasureConfig& config);

}  // namespace fanfold
