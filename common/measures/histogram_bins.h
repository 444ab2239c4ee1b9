// HistogramBins: the bin edges of a `histogram` measure, worked out from its
// options — "edges" as written, or "from", "to" and "width" stepped in
// decimal — the check behind the job file's messages about them, and the
// measure's output column names. Pure functions; thread-safe.
//
// Bins are half-open, [edge i, edge i+1), the last one too: a value equal to
// the last edge counts above the range (so bins of equal width stay equal,
// and two histograms over adjacent ranges never count a value twice).
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "common/measures/measure.h"
#include "common/measures/measure_registry.h"

namespace fanfold {

// At most this many bins (257 edges): each bin is a result column.
inline constexpr size_t kMaxHistogramBins = 256;

// The edges of config's bins, strictly increasing, at least 2; empty iff
// the options give no valid bins (CheckHistogramBins says why).
//
// By width, edge i is from + i * width computed exactly on the shortest
// decimal forms of from and width (the numbers as written in the job file)
// and rounded once to the nearest double, and the last edge is `to` itself:
// from 0 by 0.1 gives 0.3, not 0.1 + 0.1 + 0.1 = 0.30000000000000004.
std::vector<double> HistogramEdges(const MeasureConfig& config);

// What is wrong with config's bins, or nothing: exactly one of "edges" or
// the three "from", "to", "width"; edges finite and strictly increasing;
// width > 0 dividing to - from into 1 to kMaxHistogramBins whole bins whose
// edges stay distinct as doubles.
std::optional<OptionComplaint> CheckHistogramBins(const MeasureConfig& config);

// "NAME_below", "NAME_A_B" per bin [A, B) (edges as FormatNumber writes
// them), "NAME_above": one Int column each, in that order (without valid
// bins: NAME_below and NAME_above only).
std::vector<std::string> HistogramColumns(const std::string& name, const MeasureConfig& config);

}  // namespace fanfold
