// Merger's tables path: the walks that fold partials into the in-memory
// RangeTables — one partial at a time or a batch at once, on a thread of
// their own with overlap — and what settles them (coordinator/run/merger.h).
#include <algorithm>
#include <thread>

#include "coordinator/merge/encoded_group_cursor.h"
#include "coordinator/run/merger.h"

namespace fanfold {

uint64_t Merger::GroupsOf(const OpenedPartial& p, size_t r) const {
  return r < p.reductions.size() ? EncodedGroupCursor(p.reductions[r].groups, results_[r].table.measure_count()).group_count()
                                 : 0;
}

uint64_t Merger::EstimatedTableBytes() const {
  uint64_t bytes = 0;
  for (size_t r = 0; r < results_.size(); ++r) bytes += results_[r].table.group_count() * GroupBytes(r);
  return bytes;
}

uint64_t Merger::EstimatedTableBytes(const OpenedPartial& p) const {
  uint64_t bytes = 0;
  for (size_t r = 0; r < results_.size(); ++r) bytes += GroupsOf(p, r) * GroupBytes(r);
  return bytes;
}

Status Merger::Rebuild(uint32_t end) {
  for (size_t r = 0; r < results_.size(); ++r) results_[r].table.Clear();
  std::string bytes;
  for (uint32_t shard = 0; shard < end; ++shard) {
    if (failed_[shard]) continue;
    bytes.clear();
    FF_RETURN_IF_ERROR(reload_(shard, &bytes));
    OpenedPartial p;
    FF_RETURN_IF_ERROR(OpenPartial(bytes, &p, /*checksum_checked=*/false));
    if (p.reductions.size() != results_.size()) return Status::Corrupt("shard " + std::to_string(shard) + " changed");
    for (size_t r = 0; r < results_.size(); ++r) {
      Status m = results_[r].table.MergeEncoded(p.reductions[r].groups);
      if (!m.ok()) return m.WithContext("shard " + std::to_string(shard));
    }
  }
  return Status::Ok();
}

void Merger::RebuildOrFail(uint32_t end, const std::string& what) {
  Status rebuilt = Rebuild(end);
  if (!rebuilt.ok() && fatal_.ok()) fatal_ = rebuilt.WithContext(what);
}

bool Merger::Batching(const OpenedPartial& p) const {
  if (!reload_ || !batch_ready_ || runs_ || !late_failures_.empty() || !fatal_.ok()) return false;
  if (run_threshold_ == 0) return true;  // tables whatever their size
  // By the share, as MergeOne decides: a partial that alone might take the
  // tables past their limit goes the one-at-a-time way (and to the runs).
  return run_threshold_ == kRunsByBudget && settled_table_bytes_ + EstimatedTableBytes(p) <= TableLimit();
}

void Merger::LaunchBatch() {
  if (batch_.empty()) return;
  Settle();
  std::vector<BatchEntry> partials = std::move(batch_);
  batch_.clear();
  batch_bytes_ = 0;
  // The walk just settled may have moved the results to runs, or found a
  // bad partial: then one at a time.
  if (runs_ || !late_failures_.empty() || !fatal_.ok() || partials.size() == 1) {
    MergeEach(std::move(partials), /*may_overlap=*/true);
    return;
  }
  auto w = std::make_unique<TableWalk>();
  w->partials = std::move(partials);
  w->table_bytes = EstimatedTableBytes();
  if (run_threshold_ != 0) w->limit = TableLimit();
  StartWalk(std::move(w), /*may_overlap=*/true);
}

void Merger::MergeEach(std::vector<BatchEntry> partials, bool may_overlap) {
  for (BatchEntry& e : partials) MergeOne(e.shard, std::move(e.partial), std::string(), Status::Ok(), may_overlap);
}

void Merger::MergeOne(uint32_t shard, std::unique_ptr<OpenedPartial> p, std::string bytes, const Status& open,
                      bool may_overlap) {
  Settle();  // the tables' size below, and the runs, need the walk before this one ended
  // By the share: a partial whose groups, were they all new, would take
  // the tables past half of it moves the results to runs first (its
  // group count is in its encoding; telling new groups from old would
  // take a lookup each).
  if (open.ok() && !runs_ && run_threshold_ == kRunsByBudget &&
      EstimatedTableBytes() + EstimatedTableBytes(*p) > TableLimit())
    StartRuns();
  if (open.ok() && runs_) {  // the fold checks it, and drops it if bad
    KeepBodyBuffer(std::move(p->body));
    AddToRuns(shard, std::move(bytes), /*checked=*/true);
    if (runs_->BatchFull() && !LastFoldWaits(shard + 1)) FoldRuns();
    return;
  }
  if (!open.ok()) {  // the checksum matched, so this is a bug or a forged file
    KeepBodyBuffer(std::move(p->body));
    late_failures_.push_back({shard, open.message()});
    failed_[shard] = true;
    return;
  }
  auto w = std::make_unique<TableWalk>();
  w->partials.push_back({shard, std::move(p)});
  // Without a reloader every byte is checked before any is merged, so a
  // bad partial leaves the result as it was and costs only its own shard.
  // With one, the merge checks as it goes (one decode of each state, not
  // two) and a bad partial found midway has the result rebuilt from the
  // run directory without it (Rebuild): the same bytes, paid only then.
  // After one such partial the rest are checked first, as without a
  // reloader: a worker that keeps producing them costs one rebuild, not
  // one per partial.
  w->check_first = !reload_ || !late_failures_.empty();
  StartWalk(std::move(w), may_overlap);
}

void Merger::StartWalk(std::unique_ptr<TableWalk> w, bool may_overlap) {
  uint64_t groups = 0;
  for (const BatchEntry& e : w->partials)
    for (size_t r = 0; r < results_.size(); ++r) groups += GroupsOf(*e.partial, r);
  walking_ = std::move(w);
  if (overlap_ && may_overlap && groups >= overlap_min_groups_)
    walking_->thread = std::jthread([this, w = walking_.get()] { Walk(w); });
  else Settle();
}

void Merger::Walk(TableWalk* w) {
  if (w->batch()) return WalkBatch(w);
  const uint32_t shard = w->partials[0].shard;
  const OpenedPartial& p = *w->partials[0].partial;
  Status s;
  for (size_t r = 0; r < results_.size() && s.ok() && w->check_first; ++r)
    s = results_[r].table.CheckEncoded(p.reductions[r].groups);
  for (size_t r = 0; r < results_.size() && s.ok(); ++r) {
    Status m = results_[r].table.MergeEncoded(p.reductions[r].groups);
    if (!m.ok() && reload_ && m.code() != Status::Code::kLimitExceeded) {
      s = m;
      w->partly_merged = true;
    } else if (!m.ok() && w->fatal.ok()) {
      w->fatal = m.WithContext("merging shard " + std::to_string(shard));
    }
  }
  w->status = s;
}

void Merger::WalkBatch(TableWalk* w) {
  const size_t n = w->partials.size();
  std::vector<std::string_view> encoded(n);
  std::vector<uint64_t> added_bytes(n, 0);  // the estimate of each partial's new groups
  const auto drop = [&] {
    for (ReductionResult& r : results_) r.table.DropBatch();
  };
  for (size_t r = 0; r < results_.size(); ++r) {
    for (size_t i = 0; i < n; ++i) encoded[i] = w->partials[i].partial->reductions[r].groups;
    std::vector<uint64_t> added;
    w->status = results_[r].table.PlanBatch(encoded, &added);
    if (!w->status.ok()) return drop();  // nothing merged yet
    for (size_t i = 0; i < n; ++i) added_bytes[i] += added[i] * GroupBytes(r);
  }
  // MergeOne's rule for each partial in turn: the tables with what the
  // partials before it added, plus its own groups all new.
  uint64_t tables = w->table_bytes;
  for (size_t i = 0; i < n && w->limit != UINT64_MAX; ++i) {
    if (tables + EstimatedTableBytes(*w->partials[i].partial) > w->limit) {
      w->too_big = true;
      return drop();
    }
    tables += added_bytes[i];
  }
  for (size_t r = 0; r < results_.size(); ++r) {
    w->status = results_[r].table.ApplyBatch();
    if (!w->status.ok()) {
      w->partly_merged = true;
      return drop();
    }
  }
}

void Merger::Settle() {
  if (!walking_) return;
  std::unique_ptr<TableWalk> w = std::move(walking_);
  if (w->thread.joinable()) w->thread.join();
  else Walk(w.get());
  if (!w->fatal.ok() && fatal_.ok()) fatal_ = w->fatal;
  if (w->batch() && (w->too_big || !w->status.ok())) {
    // Folded again one at a time: the same result, with that path's
    // decisions (runs by the share) and failures (messages, rebuilds).
    ++refolded_batches_;
    const uint32_t first = w->partials.front().shard;
    if (w->partly_merged) RebuildOrFail(first, "rebuilding the result before shard " + std::to_string(first));
    MergeEach(std::move(w->partials), /*may_overlap=*/false);
  } else if (w->status.ok()) {
    for (const BatchEntry& e : w->partials) Account(e.shard, *e.partial);
    if (w->batch()) batched_partials_ += w->partials.size();
  } else {  // the checksum matched, so this is a bug or a forged file
    const uint32_t shard = w->partials[0].shard;
    late_failures_.push_back({shard, w->status.message()});
    failed_[shard] = true;
    if (w->partly_merged) RebuildOrFail(shard, "rebuilding the result without shard " + std::to_string(shard));
  }
  for (BatchEntry& e : w->partials)
    if (e.partial) KeepBodyBuffer(std::move(e.partial->body));
  // The test-only threshold is checked after merging (a table may pass
  // it by one partial's new groups): before, a partial's groups cannot be told
  // new from old without looking each up, and many shards over the same
  // keys must stay on the faster tables.
  for (size_t r = 0; r < results_.size() && !runs_ && run_threshold_ > 0 && run_threshold_ != kRunsByBudget; ++r)
    if (results_[r].table.group_count() > run_threshold_) StartRuns();
  settled_table_bytes_ = EstimatedTableBytes();
  batch_ready_ = true;
  for (const ReductionResult& r : results_) batch_ready_ = batch_ready_ && r.table.can_batch();
}

std::string Merger::TakeBodyBuffer() {
  if (body_buffers_.empty()) return std::string();
  std::string b = std::move(body_buffers_.back());
  body_buffers_.pop_back();
  body_buffer_bytes_ -= b.capacity();
  return b;
}

void Merger::KeepBodyBuffer(std::string body) {
  // Kept while they total at most two batches' bodies (one batch walked
  // while the next is read) plus one body of up to a quarter of the share
  // (64 MiB at most, as the workers' encode buffers): a huge partial does
  // not pin its memory outside the merge's share.
  if (runs_) return;  // no table walk will take it again
  const uint64_t c = body.capacity();
  const uint64_t one = std::min<uint64_t>(uint64_t{64} << 20, memory_.merge_bytes / 4);
  if (c == 0 || c > one || body_buffer_bytes_ + c > 2 * BatchBodyLimit() + one) return;
  body_buffer_bytes_ += c;
  body_buffers_.push_back(std::move(body));
}

void Merger::ReleaseBodyBuffers() {
  std::vector<std::string>().swap(body_buffers_);
  body_buffer_bytes_ = 0;
}

}  // namespace fanfold
