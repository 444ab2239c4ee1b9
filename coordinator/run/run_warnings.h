// RunWarnings: what a finished run warns about beyond its totals — a raw
// field that no merged record had (most likely a misspelt field) and a
// filter that kept no record. Both are printed on stderr and written to
// summary.json. Pure functions of the plan and the merged totals.
#pragma once

#include <string>
#include <vector>

#include "common/job/plan.h"
#include "coordinator/run/merger.h"

namespace fanfold {

struct RunWarning {
  std::string kind;   // "field_absent" or "filter_kept_none" (summary.json)
  std::string field;  // field_absent: the raw field (JSON Pointer or column)
  std::string text;   // the sentence, without "warning: "
};

// The warnings for totals merged under plan: a field is absent when the
// merged records had it in none of them (CSV/TSV: its cell was empty in
// all), judged only when the counts are known and some record was well
// formed; names_seen (the data's field names, from the sample taken before
// the run; may be empty) feed the "did you mean" suggestions.
std::vector<RunWarning> EndOfRunWarnings(const Plan& plan, const MergeTotals& totals,
                                         const std::vector<std::string>& names_seen);

}  // namespace fanfold
