#include "coordinator/run/field_precheck.h"

#include <algorithm>

#include "common/base/json_location.h"
#include "common/base/nearest_names.h"
#include "common/input/chunk_source.h"
#include "coordinator/run/run_summary.h"

namespace fanfold {
namespace {

// Header listings in the missing-column error stop after this many names.
constexpr size_t kMaxListedColumns = 40;

std::string Columns(const std::vector<std::string>& header) {
  std::string out;
  for (size_t c = 0; c < header.size() && c < kMaxListedColumns; ++c) out += (c ? ", " : "") + header[c];
  if (header.size() > kMaxListedColumns)
    out += ", ... (" + std::to_string(header.size() - kMaxListedColumns) + " more)";
  return out.empty() ? "(none)" : out;
}

// "the first of 48 shards", "the first 2 of 48 shards", "the job's 2 shards".
std::string ShardsText(uint32_t read, size_t total) {
  if (read == total) return total == 1 ? "the job's one shard" : "the job's " + std::to_string(total) + " shards";
  return (read == 1 ? std::string("the first") : "the first " + GroupedInteger(read)) + " of " + GroupedInteger(total) +
         " shards";
}

std::string ShardName(const Shard& s) { return "shard " + std::to_string(s.index) + " '" + s.path + "'"; }

}  // namespace

std::string FieldInBraces(std::string_view name) { return "{" + std::string(name) + "}"; }

std::string FieldSuggestion(const std::string& field, const std::vector<std::string>& names) {
  std::vector<std::string> others;
  for (const std::string& n : names) {
    const bool ancestor = field.size() > n.size() && field.compare(0, n.size(), n) == 0 && field[n.size()] == '/';
    if (n != field && !ancestor) others.push_back(n);
  }
  return DidYouMean(field, others, FieldInBraces);
}

std::string WhereFieldIsRead(const Plan& plan, const std::string& name) {
  const auto reads = [&](const Expr& e) {
    for (int slot : e.SlotsRead()) {
      const FieldTable::Slot& s = plan.fields.slot(static_cast<size_t>(slot));
      if (!s.derived && s.name == name) return true;
    }
    return false;
  };
  for (size_t i = 0; i < plan.lookups.size(); ++i)
    if (reads(plan.lookups[i].match)) return ChildPointer("/tables", i) + "/match";
  for (const CompiledDerive& d : plan.derive)
    if (reads(d.expr)) return d.pointer;
  if (plan.keep && reads(*plan.keep)) return "/keep";
  for (size_t r = 0; r < plan.reductions.size(); ++r) {
    const ReductionPlan& red = plan.reductions[r];
    const std::string& at = plan.spec.reductions[r].pointer;
    if (red.keep && reads(*red.keep)) return at + "/keep";
    for (size_t i = 0; i < red.group.size(); ++i)
      if (reads(red.group[i])) return ChildPointer(at + "/group", i);
    for (size_t i = 0; i < red.measures.size(); ++i) {
      const std::string p = ChildPointer(at + "/measures", i);
      for (size_t a = 0; a < red.measures[i].args.size(); ++a)
        if (reads(red.measures[i].args[a])) return p + (a == 0 ? "/of" : "/by");
      if (red.measures[i].only && reads(*red.measures[i].only)) return p + "/only";
    }
  }
  return "";
}

FieldPrecheck PrecheckFields(const Plan& plan, const ShardList& list, const SampleLimits& limits) {
  FieldPrecheck out;
  FieldSampler sampler(plan.format, plan.fields, limits);
  const bool csv = plan.format != RecordFormat::kNdjson;
  const auto where = [&](const std::string& field) {
    const std::string at = WhereFieldIsRead(plan, field);
    return plan.spec.job_path + ": " + (at.empty() ? "" : at + ": ");
  };
  uint32_t tried = 0;    // shards opened or tried, in order
  bool all_read = true;  // no shard failed to open or read
  for (const Shard& shard : list.shards) {
    if (!sampler.wants_more()) break;
    ++tried;
    Result<std::unique_ptr<ByteSource>> src = shard.length == UINT64_MAX
                                                  ? OpenShardSource(shard.path, shard.compression)
                                                  : OpenChunkSource(shard.path, shard.offset, shard.length);
    Status read = src.ok() ? sampler.AddShard(**src) : src.status();
    if (!read.ok()) {
      all_read = false;
      out.warnings.push_back("cannot read " + ShardName(shard) + " for the field check: " + read.message());
      if (!src.ok()) continue;
    }
    if (!csv || !read.ok()) continue;
    // A column this shard's header lacks fails the shard at run time: say
    // so now, with the columns it does have.
    const std::vector<std::string>& header = sampler.header();
    if (header.empty()) continue;  // an empty shard has no header to judge
    out.judged = true;
    for (const std::string& field : sampler.raw_names()) {
      if (std::find(header.begin(), header.end(), field) != header.end()) continue;
      out.error = Status::InvalidArgument(where(field) + "column " + FieldInBraces(field) +
                                          " is not in the header of " + ShardName(shard) +
                                          FieldSuggestion(field, header) + "; its columns: " + Columns(header));
      return out;
    }
  }
  out.names_seen = sampler.names();
  const uint32_t read = tried;
  if (csv) {
    out.sampled = "the header of " + ShardsText(read, list.shards.size());
    return out;
  }
  const bool whole = all_read && sampler.read_whole() && read == list.shards.size();
  const std::string records = GroupedInteger(sampler.records()) + (sampler.records() == 1 ? " record" : " records");
  out.sampled = records + (whole ? " of " : " from ") + ShardsText(read, list.shards.size());
  if (sampler.records() == 0) return out;  // nothing to judge by
  out.judged = true;
  for (size_t f = 0; f < sampler.raw_names().size(); ++f) {
    if (sampler.present()[f] > 0) continue;
    const std::string& field = sampler.raw_names()[f];
    const std::string in_none = sampler.records() == 1 ? " is not in the one record" : " is in none of the " + records;
    out.warnings.push_back(where(field) + "field " + FieldInBraces(field) + in_none +
                           (whole ? " of " : " sampled from ") + ShardsText(read, list.shards.size()) +
                           FieldSuggestion(field, out.names_seen));
    ++out.unseen;
  }
  return out;
}

}  // namespace fanfold
