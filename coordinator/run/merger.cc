#include "coordinator/run/merger.h"

#include <algorithm>
#include <thread>

#include "common/partial/group_key.h"
#include "coordinator/merge/encoded_group_cursor.h"
#include "coordinator/merge/run_cursor.h"

namespace fanfold {
namespace {
constexpr size_t kMaxReportedSamples = ReadStats::kMaxSamples;
}

Merger::Merger(const Plan* plan, uint32_t shard_count, uint64_t waiting_budget)
    : plan_(plan),
      shard_count_(shard_count),
      waiting_budget_(waiting_budget),
      failed_(shard_count, false) {
  SetThreads(DefaultThreads());
  totals_.kept_by_reduction.assign(plan->reductions.size(), 0);
  for (const auto& slot : plan->fields.slots())
    if (!slot.derived) totals_.field_present.push_back(0);
  totals_.lookup_unmatched.assign(plan->lookups.size(), 0);
}

size_t Merger::DefaultThreads() {
  return std::clamp<size_t>(std::thread::hardware_concurrency(), 1, kMaxDefaultThreads);
}

void Merger::SetThreads(size_t threads) {
  threads = std::max<size_t>(threads, 1);
  results_.clear();
  results_.reserve(plan_->reductions.size());
  for (const ReductionPlan& r : plan_->reductions) results_.emplace_back(&r.configs, threads);
  run_threads_ = threads;
}

Status Merger::Add(uint32_t shard, std::string partial, const PartialHeader* checked) {
  if (shard >= shard_count_ || shard < next_ || waiting_.count(shard))
    return Status::Internal("partial for shard " + std::to_string(shard) + " delivered twice or out of range");
  PartialHeader h;
  if (checked != nullptr) h = *checked;
  else FF_RETURN_IF_ERROR(DecodePartialHeader(partial, &h));
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
    std::string bytes = std::move(it->second);
    waiting_.erase(it);
    waiting_bytes_ -= bytes.size();
    // Bytes kept in memory since Add had their checksum checked there;
    // reloaded ones are checked again.
    const bool reloaded = bytes.empty() && reload_;
    if (runs_) {  // the batch reads it as a stream at fold time
      AddToRuns(next_, std::move(bytes), !reloaded);
      ++next_;
      if (runs_->BatchFull() && !LastFoldWaits(next_)) FoldRuns();
      continue;
    }
    auto p = std::make_unique<OpenedPartial>();
    // The body's buffer is kept from one partial to the next, so its pages
    // are not faulted in and zeroed again for every partial.
    p->body = TakeBodyBuffer();
    // Read, checked and decompressed while the tables' walk may still run
    // (overlap): it touches neither these bytes nor p.
    Status s = reloaded ? reload_(next_, &bytes) : Status::Ok();
    if (s.ok()) s = OpenPartial(bytes, p.get(), /*checksum_checked=*/!reloaded);
    if (s.ok() && p->reductions.size() != results_.size())
      s = Status::Corrupt("partial state has " + std::to_string(p->reductions.size()) + " reductions; the plan has " +
                          std::to_string(results_.size()));
    if (s.ok() && Batching(*p)) {
      batch_bytes_ += p->body.size();
      batch_.push_back({next_, std::move(p)});
      ++next_;
      if (batch_.size() >= kBatchPartials || batch_bytes_ >= BatchBodyLimit()) LaunchBatch();
      continue;
    }
    LaunchBatch();  // the shards before this one first
    const uint32_t shard = next_++;  // counted before the runs' last-fold check
    MergeOne(shard, std::move(p), std::move(bytes), s, /*may_overlap=*/true);
  }
  // Complete: nothing may still run (the output stage reads the tables).
  if (next_ == shard_count_) {
    LaunchBatch();
    Settle();
    ReleaseBodyBuffers();
  }
  if (runs_ && next_ == shard_count_ && runs_->pending()) {
    if (LastFoldWaits(next_)) DeferLastFold();
    else FoldRuns();
  }
}

bool Merger::LastFoldWaits(uint32_t from) const {
  if (!defer_last_fold_ || results_.size() != 1) return false;
  uint32_t s = from;  // every shard from here on merged or failed?
  while (s < shard_count_ && failed_[s]) ++s;
  return s == shard_count_;
}

void Merger::DeferLastFold() {
  if (deferred_) return;  // the batch is counted once
  // Counted now as if every partial folds, so the totals read before the
  // output stage are the run's; a fold that fails restores these first.
  saved_totals_ = totals_;
  saved_samples_ = samples_;
  for (const auto& [shard, info] : runs_->PendingPartials()) Account(shard, *info);
  deferred_ = true;
}

void Merger::FoldPending() {
  if (!deferred_) return;
  deferred_ = false;
  totals_ = std::move(saved_totals_);
  samples_ = std::move(saved_samples_);
  FoldRuns();
}

size_t Merger::PrepareStraight(size_t r) { return deferred_ ? runs_->PrepareStraight(r) : 0; }

void Merger::ConsumeStraight() {
  runs_->Consumed();
  deferred_ = false;
  consumed_ = true;
}

void Merger::AddToRuns(uint32_t shard, std::string bytes, bool checked) {
  std::unique_ptr<StoredPartialBytes> stored;
  Status s;
  if (open_) {  // read from the run directory: the batch holds no bytes
    Result<std::unique_ptr<StoredPartialBytes>> o = open_(shard);
    if (o.ok()) stored = std::move(*o);
    else s = o.status();
    checked = false;
  } else {
    if (bytes.empty() && reload_) {
      s = reload_(shard, &bytes);
      checked = false;
    }
    stored = StoredPartialBytes::InMemory(std::move(bytes));
  }
  if (s.ok()) s = runs_->Add(shard, std::move(stored), checked);
  if (!s.ok()) {  // the checksum matched when it came, so this is a bug, a forged file or a lost one
    late_failures_.push_back({shard, s.message()});
    failed_[shard] = true;
  }
}

void Merger::Account(uint32_t shard, const OpenedPartial& p) {
  for (size_t r = 0; r < results_.size(); ++r) totals_.kept_by_reduction[r] += p.reductions[r].kept;
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
  for (const auto& sample : p.samples)
    if (samples_.size() < kMaxReportedSamples) samples_.push_back({shard, sample});
}

void Merger::StartRuns() {
  ReleaseBodyBuffers();
  runs_ = std::make_unique<RunResults>(plan_, run_threads_, memory_);
  if (open_) runs_->SetOpener(open_);
  for (size_t r = 0; r < results_.size(); ++r) {
    std::string run;
    ByteWriter w(&run);
    results_[r].table.Encode(w);
    runs_->Start(r, std::move(run), results_[r].table.group_count());
    results_[r].table.Clear();  // its memory goes back
  }
}

void Merger::FoldRuns() {
  RunResults::Folded f = runs_->Fold();
  for (auto& [shard, message] : f.bad) {  // the checksum matched, so this is a bug or a forged file
    late_failures_.push_back({shard, std::move(message)});
    failed_[shard] = true;
  }
  if (!f.fatal.ok() && fatal_.ok()) fatal_ = f.fatal.WithContext("merging shards into the sorted runs");
  for (auto& [shard, p] : f.merged) Account(shard, *p);
}

Result<OutputTable> Merger::Finish(size_t r) {
  OutputTable t;
  t.columns = plan_->reductions[r].columns;
  t.key_columns = plan_->reductions[r].group.size();
  FF_RETURN_IF_ERROR(VisitRows(r, [&](std::vector<Cell>* row) {
    t.rows.push_back(std::move(*row));
    return Status::Ok();
  }));
  SortRows(&t, {});
  return t;
}

Status Merger::VisitRows(size_t r, const RowVisitor& visit) {
  if (!complete()) return Status::Internal("Merger::VisitRows before every shard was merged");
  if (consumed_) return Status::Internal("Merger::VisitRows after the result was folded straight into the output");
  FoldPending();
  if (!fatal_.ok()) return fatal_;
  if (runs_) return VisitRunRows(r, visit);
  const ReductionPlan& plan = plan_->reductions[r];
  RangeTables& result = results_[r].table;
  // With no group keys there is always exactly one row, even over no input.
  if (plan.group.empty() && result.group_count() == 0) (void)result.FindOrAdd("");
  std::vector<uint64_t>& skipped = results_[r].skipped;
  std::vector<uint64_t>& degraded = results_[r].degraded;
  skipped.assign(plan.measures.size(), 0);
  degraded.assign(plan.measures.size(), 0);
  // Rows of every range, each range's in its table's order; the output
  // stage orders them (coordinator/run/result/result_stream.h).
  std::vector<Cell> row;
  for (size_t i = 0; i < result.range_count(); ++i) {
    const GroupTable& table = result.table(i);
    for (size_t g = 0; g < table.group_count(); ++g) {
      row.clear();
      row.reserve(plan.columns.size());
      FF_RETURN_IF_ERROR(DecodeKey(table.key(g), plan.group.size(), &row));
      MeasureState* const* states = table.states(g);
      for (size_t m = 0; m < plan.measures.size(); ++m) {
        states[m]->Finalize(&row);
        skipped[m] += states[m]->skipped();
        degraded[m] += states[m]->degraded() ? 1 : 0;
      }
      FF_RETURN_IF_ERROR(visit(&row));
    }
  }
  return Status::Ok();
}

}  // namespace fanfold
