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

size_t OutputColumnCount(const MeasureConfig& config) {
  return MeasureRowOf(config.kind).columns("", config).size();
}

}  // namespace fanfold
