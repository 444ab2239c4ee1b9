// `fanfold check`: validate the job, sample the first shards for misspelt
// fields, then print the plan and the shard list.
#include <cstdio>
#include <iostream>

#include "common/input/byte_source.h"
#include "common/job/job_spec.h"
#include "common/job/job_loader.h"
#include "coordinator/cli/run_command.h"
#include "coordinator/run/console_log.h"
#include "coordinator/run/field_precheck.h"
#include "coordinator/run/run_summary.h"

namespace fanfold {

CommandOutcome CheckJob(const CheckOptions& o) {
  CommandOutcome out;
  Result<LoadedJob> job = LoadJob(o.job_path);
  if (!job.ok()) {
    out.status = job.status();
    return out;
  }
  const Plan& plan = *job->plan;
  const JobSpec& s = plan.spec;
  // A column missing from a header is certainly wrong (exit status 2); a
  // field in none of the sampled records may only be rare (a warning).
  const FieldPrecheck fields = PrecheckFields(plan, job->shards);
  if (!fields.error.ok()) {
    out.status = fields.error;
    return out;
  }
  for (const std::string& w : fields.warnings) LogWarning(w);
  std::string text;
  text += "job " + s.job_path + " is valid";
  if (!s.about.empty()) text += " — " + s.about;
  char fp[32];
  snprintf(fp, sizeof fp, "%016llx", static_cast<unsigned long long>(plan.fingerprint));
  text += "\nplan " + std::string(fp) + "\n";
  text += std::string("  records: ") + FormatName(plan.format) + "\n";
  for (size_t i = 0; i < plan.lookups.size() && i < s.tables.size(); ++i) {
    const TableSpec& t = s.tables[i];
    const LookupTable& table = *plan.lookups[i].table;
    text += "  table:   " + t.name + " = " + table.identity().path + " (" + FormatName(t.format) + ", " +
            GroupedInteger(table.row_count()) + " rows), key " + t.key + ", matched by " + t.match + ", brings ";
    for (size_t f = 0; f < t.fields.size(); ++f) text += (f ? ", " : "") + t.fields[f].name;
    text += "\n";
  }
  text += "  keep:    " + (s.keep.empty() ? std::string("every record") : s.keep) + "\n";
  for (const auto& d : s.derive) text += "  derive:  " + d.name + " = " + d.expr + "\n";
  for (size_t r = 0; r < plan.reductions.size(); ++r) {
    const ReductionPlan& red = plan.reductions[r];
    const ReductionSpec& rs = s.reductions[r];
    // A named reduction's lines are indented under its name.
    const std::string in = rs.name.empty() ? "  " : "    ";
    if (!rs.name.empty()) text += "  reduction " + rs.name + ":\n";
    if (!rs.keep.empty()) text += in + "keep:    " + rs.keep + "\n";
    for (const auto& d : rs.derive) text += in + "derive:  " + d.name + " = " + d.expr + "\n";
    if (rs.group.empty()) text += in + "group:   (none: one row for all records)\n";
    for (size_t i = 0; i < rs.group.size(); ++i)
      text += in + "group:   " + red.group_columns[i] +
              (red.group_columns[i] == rs.group[i] ? "" : " = " + rs.group[i]) + "\n";
    for (const auto& m : rs.measures) {
      text += in + "measure: " + m.name + " = " + m.fn;
      if (!m.of.empty()) text += "(" + m.of + (m.by.empty() ? "" : " by " + m.by) + ")";
      if (!m.only.empty()) text += ", only where " + m.only;
      text += "\n";
    }
    for (const auto& a : rs.rows.add) text += in + "add:     " + a.name + " = " + a.expr + "\n";
    if (!rs.rows.keep.empty()) text += in + "rows:    keep " + rs.rows.keep + "\n";
    text += in + "columns: ";
    for (size_t i = 0; i < red.columns.size(); ++i) text += (i ? ", " : "") + red.columns[i];
    for (const auto& a : rs.rows.add) text += ", " + a.name;
    text += "\n" + in + "output:  " + std::string(OutputFormatName(rs.emit.format)) + " to " +
            (rs.emit.path.empty() ? std::string("stdout") : rs.emit.path);
    if (rs.emit.limit) text += ", at most " + std::to_string(*rs.emit.limit) + " rows";
    text += "\n";
  }
  text += "  sampled: " + fields.sampled;
  if (fields.unseen > 0)
    text += "; " + std::to_string(fields.unseen) + (fields.unseen == 1 ? " field" : " fields") +
            " in none of them (warnings on stderr)";
  else if (fields.judged)
    text += plan.format == RecordFormat::kNdjson ? "; every field seen" : "; every column found";
  text += "\n";

  const auto& shards = job->shards.shards;
  uint64_t total = 0;
  for (const auto& sh : shards) total += sh.bytes();
  text += std::to_string(shards.size()) + " shards, " + Megabytes(total) + "\n";
  for (const auto& sh : shards) {
    char line[64];
    snprintf(line, sizeof line, "  %5u  %12s  %-4s  ", sh.index, GroupedInteger(sh.bytes()).c_str(),
             CompressionName(sh.compression));
    text += line + sh.path;
    if (sh.length != UINT64_MAX)
      text += " [bytes " + std::to_string(sh.offset) + "–" + std::to_string(sh.offset + sh.length) + ")";
    text += "\n";
  }
  std::fwrite(text.data(), 1, text.size(), stdout);
  return out;
}

}  // namespace fanfold
