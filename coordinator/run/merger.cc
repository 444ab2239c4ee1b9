#include "coordinator/run/merger.h"

#include "common/partial/group_key.h"

namespace fanfold {
namespace {
constexpr size_t kMaxReportedSamples = ReadStats::kMaxSamples;
}

Merger::Merger(const Plan* plan, uint32_t shard_count, uint64_t waiting_budget)
    : plan_(plan),
      shard_count_(shard_count),
      result_(&configs_),
      waiting_budget_(waiting_budget),
      failed_(shard_count, false) {
  for (const auto& m : plan->measures) configs_.push_back(m.config);
  for (const auto& slot : plan->fields.slots())
    if (!slot.derived) totals_.field_present.push_back(0);
  totals_.lookup_unmatched.assign(plan->lookups.size(), 0);
}

Status Merger::Add(uint32_t shard, std::string partial) {
  if (shard >= shard_count_ || shard < next_ || waiting_.count(shard))
    return Status::Internal("partial for shard " + std::to_string(shard) + " delivered twice or out of range");
  PartialHeader h;
  FF_RETURN_IF_ERROR(DecodePartialHeader(partial, &h));
  if (h.fingerprint != plan_->fingerprint) return Status::Corrupt("partial state is from a different job plan");
  if (h.shard_index != shard)
    return Status::Corrupt("partial state is for shard " + std::to_string(h.shard_index) + ", not " +
                           std::to_string(shard));
  // An early partial waits in memory while the waiting ones stay within
  // the budget (reading thousands of tiny ones back costs more than
  // their bytes); past it, it is read back from the run directory when its
  // turn comes. Swapped with an empty string, not cleared: clear() keeps
  // the buffer, and hundreds of early partials would keep their memory.
  if (reload_ && shard != next_ && waiting_bytes_ + partial.size() > waiting_budget_) std::string().swap(partial);
  waiting_bytes_ += partial.size();
  waiting_.emplace(shard, std::move(partial));
  Drain();
  return Status::Ok();
}

void Merger::MarkFailed(uint32_t shard) {
  if (shard >= shard_count_ || shard < next_) return;
  if (auto it = waiting_.find(shard); it != waiting_.end()) {
    waiting_bytes_ -= it->second.size();
    waiting_.erase(it);
  }
  failed_[shard] = true;
  Drain();
}

void Merger::Drain() {
  while (next_ < shard_count_) {
    if (failed_[next_]) {
      ++next_;
      continue;
    }
    auto it = waiting_.find(next_);
    if (it == waiting_.end()) break;
    OpenedPartial p;
    std::string bytes = std::move(it->second);
    waiting_.erase(it);
    waiting_bytes_ -= bytes.size();
    Status s = bytes.empty() && reload_ ? reload_(next_, &bytes) : Status::Ok();
    if (s.ok()) s = OpenPartial(bytes, &p);
    // Every byte is checked before any is merged, so a bad partial leaves
    // the result as it was and costs only its own shard.
    if (s.ok()) s = result_.CheckEncoded(p.groups);
    if (!s.ok()) {  // the checksum matched, so this is a bug or a forged file
      late_failures_.push_back({next_, s.message()});
      failed_[next_] = true;
      ++next_;
      continue;
    }
    Status m = result_.MergeEncoded(p.groups);
    if (!m.ok() && fatal_.ok()) fatal_ = m.WithContext("merging shard " + std::to_string(next_));
    totals_.shards_merged++;
    totals_.records += p.header.records;
    totals_.kept += p.header.kept;
    totals_.malformed += p.header.malformed;
    totals_.raw_bytes += p.header.raw_bytes;
    totals_.compressed_bytes += p.header.compressed_bytes;
    if (p.field_present.size() == totals_.field_present.size()) {
      for (size_t f = 0; f < p.field_present.size(); ++f) totals_.field_present[f] += p.field_present[f];
    } else {
      totals_.field_counts_known = false;
    }
    if (p.lookup_unmatched.size() == totals_.lookup_unmatched.size()) {
      for (size_t t = 0; t < p.lookup_unmatched.size(); ++t) totals_.lookup_unmatched[t] += p.lookup_unmatched[t];
    } else {
      totals_.lookup_counts_known = false;
    }
    for (auto& sample : p.samples)
      if (samples_.size() < kMaxReportedSamples) samples_.push_back({next_, std::move(sample)});
    ++next_;
  }
}

Result<OutputTable> Merger::Finish() {
  if (!complete()) return Status::Internal("Merger::Finish before every shard was merged");
  if (!fatal_.ok()) return fatal_;
  OutputTable t;
  t.columns = plan_->columns;
  t.key_columns = plan_->group.size();
  // With no group keys there is always exactly one row, even over no input.
  if (plan_->group.empty() && result_.group_count() == 0) (void)result_.FindOrAdd("");
  t.rows.reserve(result_.group_count());
  skipped_.assign(plan_->measures.size(), 0);
  degraded_.assign(plan_->measures.size(), 0);
  for (size_t g = 0; g < result_.group_count(); ++g) {
    std::vector<Cell> row;
    row.reserve(t.columns.size());
    FF_RETURN_IF_ERROR(DecodeKey(result_.key(g), plan_->group.size(), &row));
    MeasureState* const* states = result_.states(g);
    for (size_t m = 0; m < plan_->measures.size(); ++m) {
      states[m]->Finalize(&row);
      skipped_[m] += states[m]->skipped();
      degraded_[m] += states[m]->degraded() ? 1 : 0;
    }
    t.rows.push_back(std::move(row));
  }
  SortRows(&t, {});
  return t;
}

}  // namespace fanfold
