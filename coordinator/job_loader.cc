#include "coordinator/job_loader.h"

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
