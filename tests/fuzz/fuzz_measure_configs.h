// FuzzMeasureConfigs: the measure configs fuzz_partial_decode decodes with
// and fuzz_seed_partial encodes its seeds with — one per MeasureKind, with
// small limits so the bounded states reach their limits on small inputs.
// Test-only; pure function.
#pragma once

#include <vector>

#include "common/measures/measure.h"

namespace fanfold {

inline std::vector<MeasureConfig> FuzzMeasureConfigs() {
  std::vector<MeasureConfig> out;
  out.reserve(16);  // add() hands out references that must survive
  auto add = [&](MeasureKind kind) -> MeasureConfig& {
    out.emplace_back();
    out.back().kind = kind;
    return out.back();
  };
  add(MeasureKind::kCount);
  add(MeasureKind::kCountPresent);
  add(MeasureKind::kSum);
  add(MeasureKind::kMean);
  add(MeasureKind::kVariance);
  add(MeasureKind::kStddev);
  add(MeasureKind::kMin);
  add(MeasureKind::kMax);
  MeasureConfig& q = add(MeasureKind::kQuantile);
  q.probabilities = {0, 0.25, 0.5, 1};
  q.limit = 64;
  MeasureConfig& aq = add(MeasureKind::kApproxQuantile);
  aq.probabilities = {0, 0.5, 0.99, 1};
  aq.alpha = 0.02;
  MeasureConfig& d = add(MeasureKind::kDistinct);
  d.limit = 64;
  MeasureConfig& hll = add(MeasureKind::kApproxDistinct);
  hll.precision = 4;
  MeasureConfig& hll12 = add(MeasureKind::kApproxDistinct);
  hll12.precision = 12;
  MeasureConfig& top = add(MeasureKind::kTop);
  top.k = 3;
  top.limit = 8;
  add(MeasureKind::kFirst);
  add(MeasureKind::kLast);
  return out;
}

}  // namespace fanfold
