#include "coordinator/merge/run_results.h"

#include <algorithm>

#include "common/base/byte_io.h"
#include "coordinator/merge/encoded_group_cursor.h"
#include "coordinator/merge/group_fold.h"

namespace fanfold {
namespace {

uint64_t GroupCount(std::string_view encoded, size_t measures) {
  return EncodedGroupCursor(encoded, measures).group_count();
}

}  // namespace

RunResults::RunResults(const Plan* plan, size_t threads, MergeMemory memory)
    : plan_(plan), threads_(threads < 1 ? 1 : threads), memory_(memory), runs_(plan->reductions.size()) {}

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

void RunResults::Add(uint32_t shard, std::unique_ptr<OpenedPartial> p) {
  for (size_t r = 0; r < p->reductions.size(); ++r)
    batch_groups_ += GroupCount(p->reductions[r].groups, plan_->reductions[r].configs.size());
  batch_bytes_ += p->body.size();
  batch_.emplace_back(shard, std::move(p));
}

bool RunResults::BatchFull() const {
  const uint64_t bytes_cap = std::min(kMaxBatchBytes, memory_.merge_bytes / 4);
  return batch_groups_ >= 2 * run_groups_ || batch_bytes_ >= bytes_cap;
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
  return 2 * (run_bytes() + batch_bytes_) > memory_.merge_bytes;
}

FoldOutcome RunResults::FoldOne(size_t r, bool spill, uint32_t end, std::unique_ptr<StoredRun>* next) {
  const std::vector<MeasureConfig>* configs = &plan_->reductions[r].configs;
  FoldInputs in;
  in.base_pieces = runs_[r]->pieces();
  for (const auto& [shard, p] : batch_) in.partials.push_back(p->reductions[r].groups);
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

RunResults::Folded RunResults::Fold() {
  Folded out;
  while (!batch_.empty()) {
    const bool spill = ShouldSpill();
    const uint32_t end = batch_.back().first + 1;
    std::vector<std::unique_ptr<StoredRun>> next(runs_.size());
    size_t bad = FoldOutcome::kNoPartial;
    Status why;
    uint64_t groups = 0;
    for (size_t r = 0; r < runs_.size() && bad == FoldOutcome::kNoPartial; ++r) {
      FoldOutcome o = FoldOne(r, spill, end, &next[r]);
      if (!o.status.ok() && o.bad_partial == FoldOutcome::kNoPartial) {
        out.fatal = o.status;
        batch_.clear();
        batch_groups_ = batch_bytes_ = 0;
        return out;
      }
      bad = o.bad_partial;
      why = o.status;
      groups += o.groups;
    }
    if (bad != FoldOutcome::kNoPartial) {  // drop it and fold the rest again
      out.bad.emplace_back(batch_[bad].first, why.message());
      batch_.erase(batch_.begin() + static_cast<std::ptrdiff_t>(bad));
      continue;
    }
    for (size_t r = 0; r < runs_.size(); ++r) runs_[r] = std::move(next[r]);  // the old runs' files go
    run_groups_ = groups;
    ++folds_;
    out.merged = std::move(batch_);
    batch_.clear();
  }
  batch_groups_ = batch_bytes_ = 0;
  return out;
}

}  // namespace fanfold
