// FuzzMeasureConfigs: the measure configs fuzz_partial_decode decodes with
// and fuzz_seed_partial encodes its seeds with — every row of the measure
// registry, in its order, with small bounds where a measure has them so the
// bounded states reach their limits on small inputs. A new measure is fuzzed
// with its defaults without an edit here. Test-only; pure function.
#pragma once

#include <vector>

#include "common/measures/measure.h"
#include "common/measures/measure_registry.h"

namespace fanfold {

inline std::vector<MeasureConfig> FuzzMeasureConfigs() {
  std::vector<MeasureConfig> out;
  for (const MeasureRow& row : MeasureRows()) {
    MeasureConfig c;
    c.kind = row.kind;
    switch (row.kind) {
      case MeasureKind::kQuantile:
        c.probabilities = {0, 0.25, 0.5, 1};
        c.limit = 64;
        break;
      case MeasureKind::kDdSketch:
        c.probabilities = {0, 0.5, 0.99, 1};
        c.alpha = 0.02;
        break;
      case MeasureKind::kDistinct: c.limit = 64; break;
      case MeasureKind::kHyperLogLog:  // the sparse-looking small sketch, then the default size
        c.precision = 4;
        out.push_back(c);
        c.precision = 12;
        break;
      case MeasureKind::kTop:
        c.k = 3;
        c.limit = 8;
        break;
      case MeasureKind::kHistogram:  // by edges, 2^53 among them; then by width
        c.edges = {-5, 0, 2.5, 100, 9007199254740992.0};
        out.push_back(c);
        c.edges.clear();
        c.from = 0;
        c.to = 1;
        c.width = 0.1;
        break;
      default: break;
    }
    out.push_back(c);
  }
  return out;
}

}  // namespace fanfold
