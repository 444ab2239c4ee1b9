// ReportHtml: the run report as one self-contained HTML page — inline CSS,
// inline SVG charts and a few lines of inline script (sortable tables);
// nothing fetched from anywhere. Sections: summary (every number carries
// data-summary="KEY" and data-value, KEY naming its summary.json field), one
// timeline and throughput chart per coordinator session, shard times and
// stragglers, where the workers' time went, bad records, failed shards, all
// shards, and, given a scale result, the scaling chart. Colours follow the
// Okabe–Ito colour-blind-safe palette and every state has a text or symbol
// as well. Pure functions; thread-safe.
#pragma once

#include <string>

#include "coordinator/report/run_analysis.h"
#include "coordinator/rundir/run_record_reader.h"
#include "coordinator/report/scale_result.h"

namespace fanfold {

// `scale` may be null.
std::string RenderReportHtml(const RunRecord& record, const RunAnalysis& analysis, const ScaleResult* scale);
// A page with only the scaling results (what `fanfold scale --html` writes).
std::string RenderScaleHtml(const ScaleResult& scale);

}  // namespace fanfold
