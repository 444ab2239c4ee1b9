// The rows. Each measure's semantics, encoding and bounds are in its own
// header and in docs/measures.md (a unit test checks every fn is named there).
#include "common/measures/measure_registry.h"

#include <charconv>
#include <cstdlib>

#include "common/measures/count.h"
#include "common/measures/exact_distinct.h"
#include "common/measures/exact_quantile.h"
#include "common/measures/extreme.h"
#include "common/measures/histogram.h"
#include "common/measures/histogram_bins.h"
#include "common/measures/pick_by_order.h"
#include "common/measures/measure_options.h"
#include "common/measures/moments.h"
#include "common/measures/sum.h"
#include "common/measures/sketches/ddsketch.h"
#include "common/measures/sketches/hyperloglog.h"
#include "common/measures/top.h"

namespace fanfold {
namespace {

template <class State, auto... kArgs>
std::unique_ptr<MeasureState> MakeWith(const MeasureConfig&) {
  return std::make_unique<State>(kArgs...);
}

template <class State>
std::unique_ptr<MeasureState> MakeFromConfig(const MeasureConfig& config) {
  return std::make_unique<State>(config);
}

std::vector<std::string> OneColumn(const std::string& name, const MeasureConfig&) { return {name}; }

// "p50", "p99.9": the probability as a percentage, shortest round-trip form.
std::string ProbabilityLabel(double p) {
  char buf[64];
  auto [end, ec] = std::to_chars(buf, buf + sizeof buf, p * 100);
  std::string out = "p";  // appended, not "p" + string: GCC 12 warns falsely on that (-Wrestrict)
  out.append(buf, end);
  return out;
}

std::vector<std::string> ColumnPerProbability(const std::string& name, const MeasureConfig& config) {
  std::vector<std::string> out;
  for (double q : config.probabilities) out.push_back(name + "_" + ProbabilityLabel(q));
  return out;
}

// top reports k values out of at most `limit` tracked.
std::optional<OptionComplaint> TopLimitAtLeastK(const MeasureConfig& config) {
  if (config.limit >= config.k) return std::nullopt;
  return OptionComplaint{"limit", "a limit of at least k (" + std::to_string(config.k) + ")", -1};
}

std::vector<MeasureRow> BuildRows() {
  using K = MeasureKind;
  return {
      {K::kCount, "count", 0, {}, OneColumn, nullptr, MakeWith<CountState, false>},
      {K::kCountPresent, "count_present", 1, {}, OneColumn, nullptr, MakeWith<CountState, true>},
      {K::kSum, "sum", 1, {}, OneColumn, nullptr, MakeWith<SumState>},
      {K::kMean, "mean", 1, {}, OneColumn, nullptr, MakeWith<MomentsState, K::kMean>},
      {K::kVariance, "variance", 1, {}, OneColumn, nullptr, MakeWith<MomentsState, K::kVariance>},
      {K::kStddev, "stddev", 1, {}, OneColumn, nullptr, MakeWith<MomentsState, K::kStddev>},
      {K::kMin, "min", 1, {}, OneColumn, nullptr, MakeWith<ExtremeState, false>},
      {K::kMax, "max", 1, {}, OneColumn, nullptr, MakeWith<ExtremeState, true>},
      {K::kQuantile, "quantile", 1, {"at", "limit"}, ColumnPerProbability, nullptr,
       MakeFromConfig<ExactQuantileState>},
      {K::kDdSketch, "ddsketch", 1, {"at", "alpha"}, ColumnPerProbability, nullptr,
       MakeFromConfig<DDSketchState>},
      {K::kDistinct, "distinct", 1, {"limit"}, OneColumn, nullptr, MakeFromConfig<ExactDistinctState>},
      {K::kHyperLogLog, "hyperloglog", 1, {"precision"}, OneColumn, nullptr,
       MakeFromConfig<HyperLogLogState>},
      {K::kTop, "top", 1, {"k", "limit"}, OneColumn, TopLimitAtLeastK, MakeFromConfig<TopState>},
      {K::kAtLowest, "at_lowest", 2, {}, OneColumn, nullptr, MakeWith<PickByOrderState, false>},
      {K::kAtHighest, "at_highest", 2, {}, OneColumn, nullptr, MakeWith<PickByOrderState, true>},
      {K::kHistogram, "histogram", 1, {"edges", "from", "to", "width"}, HistogramColumns, CheckHistogramBins,
       MakeFromConfig<HistogramState>},
  };
}

}  // namespace

bool MeasureRow::Takes(const std::string& option_key) const {
  for (const char* o : options)
    if (option_key == o) return true;
  return false;
}

const std::vector<MeasureRow>& MeasureRows() {
  static const std::vector<MeasureRow>* rows = [] {
    auto* r = new std::vector<MeasureRow>(BuildRows());
    // Rows are looked up by kind as an index: kinds are 1, 2, ... in row order.
    for (size_t i = 0; i < r->size(); ++i)
      if (static_cast<size_t>((*r)[i].kind) != i + 1) std::abort();
    for (const MeasureRow& row : *r)
      for (const char* o : row.options)
        if (FindMeasureOption(o) == nullptr) std::abort();
    return r;
  }();
  return *rows;
}

const MeasureRow& MeasureRowOf(MeasureKind kind) { return MeasureRows()[static_cast<size_t>(kind) - 1]; }

const MeasureRow* FindMeasureRow(const std::string& fn) {
  for (const MeasureRow& row : MeasureRows())
    if (fn == row.fn) return &row;
  return nullptr;
}

}  // namespace fanfold
