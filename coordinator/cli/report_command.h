// `fanfold report RUN_DIR`: reads a run directory (finished or not) and
// writes the HTML report (default RUN_DIR/report.html, or -o FILE), prints
// a short text summary on stdout (the command's output; notes go to
// stderr), and on request exports every shard attempt's timings as a JSON
// array (--timings-json) and adds a `fanfold scale` result's chart
// (--scale). Main thread only.
#pragma once

#include <string>

#include "coordinator/cli/run_command.h"
#include "coordinator/rundir/run_record_reader.h"

namespace fanfold {

struct ReportOptions {
  std::string run_dir;            // RUN_DIR: a run directory, finished or not
  std::string html_path;          // "" = RUN_DIR/report.html
  std::string timings_json_path;  // "" = no timings file
  std::string scale_json_path;    // "" = no scaling section
  bool quiet = false;             // no text summary, no notes
};

CommandOutcome ReportRun(const ReportOptions& options);

// The attempts of record as a JSON array, in start order: shard, path,
// attempt, worker, outcome, final, start_ns, end_ns, wall_ns, the worker's
// read_ns / parse_ns / aggregate_ns / encode_ns, bytes_in, bytes_raw,
// records, kept, malformed, and message (failures only).
std::string TimingsJson(const RunRecord& record);

}  // namespace fanfold
