#include "coordinator/run/run_warnings.h"

#include <algorithm>

#include "coordinator/run/field_precheck.h"
#include "coordinator/run/run_summary.h"

namespace fanfold {

std::vector<RunWarning> EndOfRunWarnings(const Plan& plan, const MergeTotals& totals,
                                         const std::vector<std::string>& names_seen) {
  std::vector<RunWarning> out;
  const uint64_t well_formed = totals.records - std::min(totals.records, totals.malformed);
  if (well_formed == 0) return out;  // nothing was read to judge by
  const std::string records =
      well_formed == 1 ? "the one well-formed record" : "the " + GroupedInteger(well_formed) + " well-formed records";
  const auto where = [&](const std::string& pointer) {
    return plan.spec.job_path + ": " + (pointer.empty() ? "" : pointer + ": ");
  };
  if (totals.field_counts_known) {
    const bool csv = plan.format != RecordFormat::kNdjson;
    size_t f = 0;
    for (const FieldTable::Slot& slot : plan.fields.slots()) {
      if (slot.derived) continue;
      if (f < totals.field_present.size() && totals.field_present[f] == 0) {
        // A CSV column is in the header (else the run stops before it
        // starts), so only an NDJSON field gets the nearest names seen.
        std::string what = csv ? "column " + FieldInBraces(slot.name) + " was empty in " + records
                               : "field " + FieldInBraces(slot.name) + " was in none of " + records;
        if (!csv) what += FieldSuggestion(slot.name, names_seen);
        out.push_back({"field_absent", slot.name, where(WhereFieldIsRead(plan, slot.name)) + what});
      }
      ++f;
    }
  }
  if (plan.keep && totals.kept == 0)
    out.push_back({"filter_kept_none", "", where("/keep") + "the filter kept none of " + records});
  // A reduction's own filter is judged only on records the job's filter kept.
  const std::string passed = plan.keep ? " that the job's filter kept" : "";
  for (size_t r = 0; r < plan.reductions.size() && totals.kept > 0; ++r) {
    if (!plan.reductions[r].keep || r >= totals.kept_by_reduction.size() || totals.kept_by_reduction[r] > 0) continue;
    const std::string of = totals.kept == 1 ? "the one record" + passed : "the " + GroupedInteger(totals.kept) + " records" + passed;
    out.push_back({"filter_kept_none", "", where(plan.spec.reductions[r].pointer + "/keep") + "the filter of reduction \"" +
                                               plan.reductions[r].name + "\" kept none of " + of});
  }
  return out;
}

}  // namespace fanfold
