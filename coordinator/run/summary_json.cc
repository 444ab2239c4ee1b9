#include "coordinator/run/summary_json.h"

#include <algorithm>

#include <nlohmann/json.hpp>

#include "common/job/job_loader.h"
#include "coordinator/run/run_warnings.h"

namespace fanfold {
namespace {

using nlohmann::json;

json SummaryJson(const RunInput& in, const RunSummary& s, int workers, uint64_t retries) {
  const Plan& plan = *in.plan;
  json failed = json::array();
  for (const auto& f : s.failures)
    failed.push_back({{"shard", f.shard}, {"path", f.path}, {"attempts", f.attempts}, {"reason", f.message}});
  json samples = json::array();
  for (const auto& m : s.samples) {
    const Shard& shard = in.shards->shards[m.shard];
    json sample = {{"shard", m.shard}, {"path", shard.path}, {"line", m.sample.line}, {"reason", m.sample.reason}};
    if (shard.offset > 0) sample["chunk_offset"] = shard.offset;  // the line counts from there
    samples.push_back(std::move(sample));
  }
  const MergeTotals& t = s.totals;
  // Per raw field, the records that had it (null when a partial lacked the
  // counts); the warnings as on stderr.
  json presence = nullptr;
  if (t.field_counts_known) {
    presence = json::object();
    size_t f = 0;
    for (const FieldTable::Slot& slot : plan.fields.slots())
      if (!slot.derived && f < t.field_present.size()) presence[slot.name] = t.field_present[f++];
  }
  // Per lookup table: its rows and the records whose match found no row
  // (null when a partial lacked the counts).
  json lookups = json::object();
  for (size_t i = 0; i < plan.lookups.size(); ++i) {
    json unmatched = nullptr;
    if (t.lookup_counts_known && i < t.lookup_unmatched.size()) unmatched = t.lookup_unmatched[i];
    lookups[plan.lookups[i].name] = {{"rows", plan.lookups[i].table->row_count()}, {"unmatched", unmatched}};
  }
  json warnings = json::array();
  for (const RunWarning& w : EndOfRunWarnings(plan, t, in.names_seen)) {
    json item = {{"kind", w.kind}, {"message", w.text}};
    if (!w.field.empty()) item["field"] = w.field;
    warnings.push_back(std::move(item));
  }
  return {{"job", plan.spec.job_path},
          {"plan", FingerprintHex(plan.fingerprint)},
          {"run_dir", in.dir->path()},
          {"workers", workers},
          {"generation", in.generation},
          {"shards", {{"total", s.shards_total}, {"done", t.shards_merged}, {"failed", s.failures.size()},
                      {"reused", in.reused.size()}, {"processed", s.processed.shards}, {"retries", retries},
                      {"dropped", in.dropped}}},
          {"dropped", in.dropped_paths},
          {"records", {{"read", t.records}, {"kept", t.kept}, {"malformed", t.malformed}}},
          {"bytes", {{"compressed", t.compressed_bytes}, {"decompressed", t.raw_bytes}}},
          {"wall_seconds", s.wall_seconds},
          // This session's work alone (a resume reuses the rest): rates are over these.
          {"processed", {{"records", s.processed.records},
                         {"bytes", {{"compressed", s.processed.compressed_bytes},
                                    {"decompressed", s.processed.raw_bytes}}}}},
          {"failed", failed},
          {"malformed_samples", samples},
          {"field_presence", presence},
          {"lookups", lookups},
          {"warnings", warnings},
          // Measured by the kernel (getrusage); null for a worker when none ran.
          {"peak_rss_bytes", {{"coordinator", s.peak_rss},
                              {"largest_worker", s.peak_worker_rss > 0 ? json(s.peak_worker_rss) : json(nullptr)}}},
          {"memory", {{"cap_bytes", s.memory_cap},
                      {"cap_from", s.memory_cap_from},
                      {"merge", s.merge_held},
                      {"spilled_bytes", s.merge_spilled_bytes}}},
          // The job's choice and what its rule decides for this machine's workers
          // (docs/decode-ahead.md); MPI agents decide for their own machines.
          {"decode_ahead", {{"asked", AheadChoiceName(plan.spec.decode_ahead)},
                            {"threaded", AheadThreaded(plan.spec.decode_ahead, static_cast<unsigned>(workers))}}}};
}

// What summary.json says of one reduction: its measures' skipped values and
// inexact groups, its rows step, where its result went.
json ReductionJson(const ReductionPlan& plan, const ReductionSpec& spec, const Merger& merger, size_t r,
                   const FinishedReduction& f) {
  json skipped = json::object();
  json inexact = json::object();
  for (size_t m = 0; m < plan.measures.size() && m < merger.skipped(r).size(); ++m) {
    skipped[plan.measures[m].name] = merger.skipped(r)[m];
    if (merger.degraded(r)[m] > 0) inexact[plan.measures[m].name] = merger.degraded(r)[m];
  }
  json out = {{"skipped", skipped}, {"inexact_groups", inexact}};
  if (spec.rows.given) {
    json no_value = json::object();
    for (size_t i = 0; i < plan.rows.add.size(); ++i) no_value[plan.rows.add[i].name] = f.rows.no_value[i];
    out["rows"] = {{"merged", f.rows.rows_in}, {"dropped", f.rows.rows_dropped}, {"no_value", no_value}};
  }
  out["output"] = f.output_path.empty() ? "stdout" : f.output_path;
  return out;
}

}  // namespace

std::string ResultFileName(const std::string& reduction, OutputFormat f) {
  std::string name = reduction.empty() ? "result" : "result-" + reduction;
  switch (f) {
    case OutputFormat::kCsv: return name + ".csv";
    case OutputFormat::kJson: return name + ".json";
    case OutputFormat::kNdjson: return name + ".ndjson";
    case OutputFormat::kTable: return name + ".txt";
  }
  return name;
}

bool IsResultFileName(const std::string& file_name) {
  return file_name.rfind("result.", 0) == 0 || file_name.rfind("result-", 0) == 0;
}

std::string SummaryJsonText(const RunInput& in, const RunSummary& s, const Merger& merger,
                            const std::vector<FinishedReduction>& finished, int workers, uint64_t retries) {
  const Plan& plan = *in.plan;
  json j = SummaryJson(in, s, workers, retries);
  if (plan.spec.named_reductions()) {
    json list = json::array();
    for (size_t r = 0; r < plan.reductions.size(); ++r) {
      json one = ReductionJson(plan.reductions[r], plan.spec.reductions[r], merger, r, finished[r]);
      one["name"] = plan.reductions[r].name;
      one["kept"] = merger.totals().kept_by_reduction[r];
      one["result"] = ResultFileName(plan.reductions[r].name, plan.spec.reductions[r].emit.format);
      list.push_back(std::move(one));
    }
    j["reductions"] = std::move(list);
  } else {
    j.update(ReductionJson(plan.reductions[0], plan.spec.reductions[0], merger, 0, finished[0]));
  }
  return j.dump(1) + "\n";
}

}  // namespace fanfold
