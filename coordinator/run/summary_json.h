// SummaryJson: what a finished run writes to summary.json (the layout is in
// docs/run-directory.md) — totals, failures, samples, field presence, lookup
// counts, warnings, and per reduction its skipped values, inexact groups,
// rows step and output — and the name of a reduction's result file in the
// run directory. Pure functions of what the run engine collected.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "coordinator/run/merger.h"
#include "coordinator/run/run_engine.h"
#include "coordinator/run/run_summary.h"

namespace fanfold {

// result.<ext> for a job of one unnamed reduction, result-<name>.<ext> for
// each named one.
std::string ResultFileName(const std::string& reduction, OutputFormat f);

// True iff file_name is one ResultFileName gives, for some reduction and format.
bool IsResultFileName(const std::string& file_name);

// summary.json's text (indented, with a final newline). REQUIRES: the
// merger finished every reduction, and `finished` has one entry per reduction.
std::string SummaryJsonText(const RunInput& in, const RunSummary& s, const Merger& merger,
                            const std::vector<FinishedReduction>& finished, int workers, uint64_t retries);

}  // namespace fanfold
