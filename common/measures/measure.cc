// The measure factory: maps a MeasureKind to its state class. Every state's
// semantics, encoding and bounds are in its own header and docs/measures.md.
#include "common/measures/measure.h"

#include "common/measures/count.h"
#include "common/measures/ddsketch.h"
#include "common/measures/exact_distinct.h"
#include "common/measures/exact_quantile.h"
#include "common/measures/extreme.h"
#include "common/measures/first_last.h"
#include "common/measures/hyperloglog.h"
#include "common/measures/moments.h"
#include "common/measures/sum.h"
#include "common/measures/top.h"

namespace fanfold {

std::unique_ptr<MeasureState> NewMeasureState(const MeasureConfig& config) {
  switch (config.kind) {
    case MeasureKind::kCount: return std::make_unique<CountState>(/*present_only=*/false);
    case MeasureKind::kCountPresent: return std::make_unique<CountState>(/*present_only=*/true);
    case MeasureKind::kSum: return std::make_unique<SumState>();
    case MeasureKind::kMean:
    case MeasureKind::kVariance:
    case MeasureKind::kStddev: return std::make_unique<MomentsState>(config.kind);
    case MeasureKind::kMin: return std::make_unique<ExtremeState>(/*is_max=*/false);
    case MeasureKind::kMax: return std::make_unique<ExtremeState>(/*is_max=*/true);
    case MeasureKind::kQuantile: return std::make_unique<ExactQuantileState>(config);
    case MeasureKind::kApproxQuantile: return std::make_unique<DDSketchState>(config);
    case MeasureKind::kDistinct: return std::make_unique<ExactDistinctState>(config);
    case MeasureKind::kApproxDistinct: return std::make_unique<HyperLogLogState>(config);
    case MeasureKind::kTop: return std::make_unique<TopState>(config);
    case MeasureKind::kFirst: return std::make_unique<FirstLastState>(/*is_last=*/false);
    case MeasureKind::kLast: return std::make_unique<FirstLastState>(/*is_last=*/true);
  }
  return nullptr;  // unreachable for a validated config
}

Status MeasureState::MergeEncoded(ByteReader& r, bool apply, MeasureState* scratch) {
  FF_RETURN_IF_ERROR(scratch->Decode(r));
  return apply ? Merge(*scratch) : Status::Ok();
}

int MeasureArgCount(MeasureKind kind) {
  switch (kind) {
    case MeasureKind::kCount: return 0;
    case MeasureKind::kFirst:
    case MeasureKind::kLast: return 2;
    default: return 1;
  }
}

size_t OutputColumnCount(const MeasureConfig& config) {
  if (config.kind == MeasureKind::kQuantile || config.kind == MeasureKind::kApproxQuantile)
    return config.probabilities.size();
  return 1;
}

}  // namespace fanfold
