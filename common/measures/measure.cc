// The measure-wide entry points; each reads the kind's row in
// common/measures/measure_registry.cc.
#include "common/measures/measure.h"

#include "common/measures/measure_registry.h"

namespace fanfold {

std::unique_ptr<MeasureState> NewMeasureState(const MeasureConfig& config) {
  return MeasureRowOf(config.kind).make(config);
}

Status MeasureState::MergeEncoded(ByteReader& r, bool apply, MeasureState* scratch) {
  FF_RETURN_IF_ERROR(scratch->Decode(r));
  return apply ? Merge(*scratch) : Status::Ok();
}

int MeasureArgCount(MeasureKind kind) { return MeasureRowOf(kind).arg_count; }

bool MeasureReadsNumber(MeasureKind kind, size_t arg) {
  switch (kind) {
    case MeasureKind::kSum:
    case MeasureKind::kMean:
    case MeasureKind::kVariance:
    case MeasureKind::kStddev:
    case MeasureKind::kMin:
    case MeasureKind::kMax:
    case MeasureKind::kQuantile:
    case MeasureKind::kDdSketch:
    case MeasureKind::kHistogram: return arg == 0;
    case MeasureKind::kAtLowest:
    case MeasureKind::kAtHighest: return arg == 1;  // the ordering key
    default: return false;
  }
}

size_t OutputColumnCount(const MeasureConfig& config) {
  return MeasureRowOf(config.kind).columns("", config).size();
}

}  // namespace fanfold
