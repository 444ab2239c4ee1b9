#include "coordinator/merge/run_results.h"

#include <algorithm>

#include "common/base/byte_io.h"
#include "coordinator/merge/encoded_group_cursor.h"
#include "coordinator/merge/group_fold.h"

namespace fanfold {
namespace {
std::vector<size_t> MeasureCounts(const Plan* plan) {
  std::vector<size_t> counts;
  for (const ReductionPlan& r : plan->reductions) counts.push_back(r.configs.size());
  return counts;
}
}  // namespace

RunResults::RunResults(const Plan* plan, size_t threads, MergeMemory memory)
    : plan_(plan),
      threads_(threads < 1 ? 1 : threads),
      memory_(memory),
      runs_(plan->reductions.size()),
      measure_counts_(MeasureCounts(plan)) {}

void RunResults::Start(size_t r, const GroupTable& table) {
  std::string encoding;
  ByteWriter w(&encoding);
  table.Encode(w);
  Start(r, std::move(encoding), table.group_count());
}

void RunResults::Start(size_t r, std::string encoded, uint64_t groups) {
  runs_[r] = StoredRun::FromEncoding(std::move(encoded));
  run_groups_ += groups;
}

Status RunResults::Add(uint32_t shard, std::unique_ptr<StoredPartialBytes> bytes, bool checksum_checked) {
  Pending p;
  p.shard = shard;
  p.info = std::make_unique<OpenedPartial>();
  FF_RETURN_IF_ERROR(ScanStoredPartial(*bytes, measure_counts_, checksum_checked, p.info.get(), &p.scanned));
  for (uint64_t g : p.scanned.group_counts) batch_groups_ += g;
  batch_streams_ += p.scanned.stream_bytes;
  batch_raw_ += p.scanned.raw_bytes;
  if (!open_) {
    batch_held_ += bytes->memory_bytes();
    p.held = std::move(bytes);
  }
  batch_.push_back(std::move(p));
  return Status::Ok();
}

bool RunResults::BatchFull() const {
  const uint64_t held_cap = std::min(kMaxBatchBytes, memory_.merge_bytes / 4);
  return batch_groups_ >= 2 * run_groups_ || batch_.size() >= kMaxBatchPartials ||
         batch_streams_ * threads_ >= memory_.merge_bytes / 2 || batch_held_ >= held_cap;
}

uint64_t RunResults::run_bytes() const {
  uint64_t n = 0;
  for (const auto& run : runs_)
    if (run) n += run->bytes();
  return n;
}

bool RunResults::ShouldSpill() const {
  if (memory_.spill == nullptr) return false;
  if (spilled()) return true;
  return 2 * run_bytes() + batch_raw_ + batch_held_ + batch_streams_ * threads_ > memory_.merge_bytes;
}

FoldOutcome RunResults::FoldOne(size_t r, bool spill, uint32_t end, const std::vector<const StoredPartialBytes*>& bytes,
                                std::unique_ptr<StoredRun>* next) {
  const std::vector<MeasureConfig>* configs = &plan_->reductions[r].configs;
  FoldInputs in;
  in.base_pieces = runs_[r]->pieces();
  in.streams = bytes;
  in.reduction = r;
  for (const Pending& p : batch_) in.stream_groups.push_back(p.scanned.group_counts[r]);
  const std::vector<KeyRange> ranges = CutRanges(in, configs->size(), threads_);
  std::vector<std::string> bodies(ranges.size());
  std::vector<std::string*> outs;
  for (std::string& b : bodies) outs.push_back(&b);
  std::vector<uint64_t> groups;
  if (!spill) {
    FoldOutcome o = FoldRanges(configs, in, ranges, outs, {}, &groups);
    if (o.status.ok()) *next = StoredRun::InMemory(std::move(bodies), std::move(groups));
    return o;
  }
  // One file per key range, written as the range's fold goes.
  std::vector<std::string> names;
  std::vector<std::unique_ptr<WritableFile>> files(ranges.size());
  std::vector<GroupFold::Drain> drains;
  SpillFolder* folder = memory_.spill;
  for (size_t i = 0; i < ranges.size(); ++i) {
    names.push_back("run-0-" + std::to_string(end) + "-r" + std::to_string(r) + "-k" + std::to_string(i) + ".grp");
    drains.push_back([folder, &files, &names, i](std::string* out) -> Status {
      if (!files[i]) {
        Result<std::unique_ptr<WritableFile>> f = folder->NewFile(names[i]);
        if (!f.ok()) return f.status();
        files[i] = std::move(*f);
      }
      if (OsError e = files[i]->Append(*out); !e.ok()) return e.ToStatus(folder->PathOf(names[i]));
      folder->Count(out->size());
      out->clear();
      return Status::Ok();
    });
  }
  FoldOutcome o = FoldRanges(configs, in, ranges, outs, drains, &groups);
  for (size_t i = 0; i < ranges.size() && o.status.ok(); ++i) {
    if (!files[i]) {  // an empty range: an empty file keeps one piece per range
      if (Status s = drains[i](&bodies[i]); !s.ok()) o = FoldOutcome{s, FoldOutcome::kNoPartial, 0};
    }
    if (o.status.ok() && files[i])
      if (OsError e = files[i]->Close(); !e.ok())
        o = FoldOutcome{e.ToStatus(folder->PathOf(names[i])), FoldOutcome::kNoPartial, 0};
  }
  files.clear();
  if (!o.status.ok()) {
    for (const std::string& name : names) folder->RemoveFile(name);
    return o;
  }
  Result<std::unique_ptr<StoredRun>> run = StoredRun::Spilled(folder, std::move(names), std::move(groups));
  if (!run.ok()) return FoldOutcome{run.status(), FoldOutcome::kNoPartial, 0};
  *next = std::move(*run);
  return o;
}

std::vector<std::pair<uint32_t, const OpenedPartial*>> RunResults::PendingPartials() const {
  std::vector<std::pair<uint32_t, const OpenedPartial*>> out;
  for (const Pending& p : batch_) out.emplace_back(p.shard, p.info.get());
  return out;
}

size_t RunResults::PrepareStraight(size_t r) {
  auto s = std::make_unique<Straight>();
  s->reduction = r;
  s->in.base_pieces = runs_[r]->pieces();
  s->in.reduction = r;
  for (const Pending& p : batch_) {
    if (p.held) {
      s->in.streams.push_back(p.held.get());
    } else {
      Result<std::unique_ptr<StoredPartialBytes>> o = open_(p.shard);
      if (!o.ok()) return 0;  // Fold() drops it, naming the file
      s->opened.push_back(std::move(*o));
      s->in.streams.push_back(s->opened.back().get());
    }
    s->in.stream_groups.push_back(p.scanned.group_counts[r]);
  }
  s->ranges = CutRanges(s->in, measure_counts_[r], threads_, kSeekShareIntoRows);
  straight_ = std::move(s);
  return straight_->ranges.size();
}

FoldOutcome RunResults::FoldStraight(size_t i, const GroupFold::Visit& visit, bool* visit_failed) const {
  const Straight& s = *straight_;
  return GroupFold(&plan_->reductions[s.reduction].configs).FoldRangeTo(s.in, s.ranges[i], visit, visit_failed);
}

void RunResults::Consumed() {
  straight_.reset();
  batch_.clear();
  batch_groups_ = batch_held_ = batch_streams_ = batch_raw_ = 0;
  ++folds_;
}

RunResults::Folded RunResults::Fold() {
  straight_.reset();
  Folded out;
  while (!batch_.empty()) {
    const bool spill = ShouldSpill();
    const uint32_t end = batch_.back().shard + 1;
    // Each partial's stored bytes: held, or opened again (one file each,
    // shared by the key ranges' streams).
    std::vector<std::unique_ptr<StoredPartialBytes>> opened(batch_.size());
    std::vector<const StoredPartialBytes*> bytes;
    size_t bad = FoldOutcome::kNoPartial;
    Status why;
    for (size_t i = 0; i < batch_.size() && bad == FoldOutcome::kNoPartial; ++i) {
      if (batch_[i].held) {
        bytes.push_back(batch_[i].held.get());
        continue;
      }
      Result<std::unique_ptr<StoredPartialBytes>> o = open_(batch_[i].shard);
      if (!o.ok()) {
        bad = i;
        why = o.status();
        break;
      }
      opened[i] = std::move(*o);
      bytes.push_back(opened[i].get());
    }
    std::vector<std::unique_ptr<StoredRun>> next(runs_.size());
    uint64_t groups = 0;
    for (size_t r = 0; r < runs_.size() && bad == FoldOutcome::kNoPartial; ++r) {
      FoldOutcome o = FoldOne(r, spill, end, bytes, &next[r]);
      if (!o.status.ok() && o.bad_partial == FoldOutcome::kNoPartial) {
        out.fatal = o.status;
        batch_.clear();
        batch_groups_ = batch_held_ = batch_streams_ = batch_raw_ = 0;
        return out;
      }
      bad = o.bad_partial;
      why = o.status;
      groups += o.groups;
    }
    if (bad != FoldOutcome::kNoPartial) {  // drop it and fold the rest again
      out.bad.emplace_back(batch_[bad].shard, why.message());
      batch_.erase(batch_.begin() + static_cast<std::ptrdiff_t>(bad));
      continue;
    }
    for (size_t r = 0; r < runs_.size(); ++r) runs_[r] = std::move(next[r]);  // the old runs' files go
    run_groups_ = groups;
    ++folds_;
    for (Pending& p : batch_) out.merged.emplace_back(p.shard, std::move(p.info));
    batch_.clear();
  }
  batch_groups_ = batch_held_ = batch_streams_ = batch_raw_ = 0;
  return out;
}

}  // namespace fanfold
