// ReportCharts: the inline SVG charts of the run report — the timeline (one
// lane per worker, one bar per shard attempt, failures and retries marked
// with a symbol as well as a colour), throughput over time, the histogram
// of shard times, and the scaling chart of `fanfold scale`. Each returns
// one <svg> element; colours come from the page's CSS classes (report_html).
// Pure functions; thread-safe.
#pragma once

#include <string>

#include "coordinator/report/run_analysis.h"
#include "coordinator/rundir/run_record_reader.h"
#include "coordinator/report/scale_result.h"

namespace fanfold {

// Every bar carries data-attempt="SHARD.ATTEMPT", data-shard, data-worker
// and data-outcome, and a <title> with the shard, times and records.
std::string TimelineSvg(const RunRecord& record, const SessionView& session);
std::string ThroughputSvg(const SessionView& session);
std::string ShardTimeHistogramSvg(const RunAnalysis& analysis);
// Malformed records per shard, one column per shard index.
std::string MalformedSvg(const RunRecord& record, const RunAnalysis& analysis);
// Speedup against workers with the ideal line and the shard-skew bound.
std::string ScalingSvg(const ScaleResult& scale);

// The <defs> (hatch patterns) the charts refer to; once per page.
std::string ChartDefsSvg();

// "12.3 ms", "1.25 s": a duration for labels and hover text.
std::string DurationText(double seconds);

}  // namespace fanfold
