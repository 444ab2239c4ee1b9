#include "common/job/job_loader.h"

#include <cstdio>

namespace fanfold {

Result<LoadedJob> LoadJob(const std::string& job_path) {
  Result<JobSpec> spec = LoadJobSpec(job_path);
  if (!spec.ok()) return spec.status();
  // Compile first with the declared (or NDJSON) format so that expression
  // errors are reported even when the inputs are missing...
  RecordFormat guess = spec->format.value_or(RecordFormat::kNdjson);
  Result<ShardList> shards = ExpandShards(*spec);
  if (shards.ok()) guess = shards->format;
  Result<std::unique_ptr<Plan>> plan = CompilePlan(spec.value(), guess);
  if (!plan.ok()) return plan.status();
  // ...then report input problems.
  if (!shards.ok()) return shards.status();
  LoadedJob job;
  job.plan = std::move(plan.value());
  job.shards = std::move(shards.value());
  return job;
}

}  // namespace fanfold

namespace fanfold {

std::string FingerprintHex(uint64_t fingerprint) {
  char buf[17];
  snprintf(buf, sizeof buf, "%016llx", static_cast<unsigned long long>(fingerprint));
  return buf;
}

Result<std::unique_ptr<Plan>> LoadWorkerPlan(const std::string& job_path, const std::string& format,
                                             const std::string& fingerprint_hex, const std::string& base_dir,
                                             std::string_view expected_plan_text) {
  RecordFormat f;
  if (!FormatFromText(format, &f)) return Status::InvalidArgument("unknown record format '" + format + "'");
  Result<JobSpec> spec = LoadJobSpec(job_path);
  if (!spec.ok()) return spec.status();
  if (!base_dir.empty()) spec->base_dir = base_dir;
  Result<std::unique_ptr<Plan>> plan = CompilePlan(std::move(spec.value()), f);
  if (!plan.ok()) return plan.status();
  if (FingerprintHex((*plan)->fingerprint) == fingerprint_hex) return plan;
  const std::string tables = ChangedLookupTables(expected_plan_text, PlanCanonicalText(**plan));
  if (!tables.empty())
    return Status::InvalidArgument(tables + " changed since the run started (its size, modification time or "
                                   "content), so the saved partials may no longer hold");
  return Status::InvalidArgument("job file '" + job_path + "' changed since the run started (plan " +
                                 FingerprintHex((*plan)->fingerprint) + ", expected " + fingerprint_hex + ")");
}

}  // namespace fanfold
