#include "coordinator/merge/run_results.h"

#include "common/base/byte_io.h"
#include "coordinator/merge/encoded_group_cursor.h"
#include "coordinator/merge/group_fold.h"

namespace fanfold {
namespace {

uint64_t GroupCount(std::string_view encoded, size_t measures) {
  return EncodedGroupCursor(encoded, measures).group_count();
}

}  // namespace

RunResults::RunResults(const Plan* plan, size_t threads)
    : plan_(plan), threads_(threads < 1 ? 1 : threads), runs_(plan->reductions.size()) {}

void RunResults::Start(size_t r, const GroupTable& table) {
  runs_[r].clear();
  ByteWriter w(&runs_[r]);
  table.Encode(w);
  run_groups_ += table.group_count();
}

void RunResults::Start(size_t r, std::string encoded, uint64_t groups) {
  runs_[r] = std::move(encoded);
  run_groups_ += groups;
}

void RunResults::Add(uint32_t shard, std::unique_ptr<OpenedPartial> p) {
  for (size_t r = 0; r < p->reductions.size(); ++r)
    batch_groups_ += GroupCount(p->reductions[r].groups, plan_->reductions[r].configs.size());
  batch_bytes_ += p->body.size();
  batch_.emplace_back(shard, std::move(p));
}

bool RunResults::BatchFull() const { return batch_groups_ >= 2 * run_groups_ || batch_bytes_ >= kMaxBatchBytes; }

RunResults::Folded RunResults::Fold() {
  Folded out;
  std::vector<std::string> next(runs_.size());
  while (!batch_.empty()) {
    size_t bad = FoldOutcome::kNoPartial;
    Status why;
    uint64_t groups = 0;
    for (size_t r = 0; r < runs_.size() && bad == FoldOutcome::kNoPartial; ++r) {
      FoldInputs in;
      in.base = runs_[r];
      for (const auto& [shard, p] : batch_) in.partials.push_back(p->reductions[r].groups);
      FoldOutcome o = FoldEncoded(&plan_->reductions[r].configs, in, threads_, &next[r]);
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
    for (size_t r = 0; r < runs_.size(); ++r) runs_[r].swap(next[r]);
    run_groups_ = groups;
    out.merged = std::move(batch_);
    batch_.clear();
  }
  batch_groups_ = batch_bytes_ = 0;
  return out;
}

}  // namespace fanfold
