// Merger's walks of its sorted runs for the output stage (merger.h:
// VisitRunRows, VisitRunPieces) and the last fold straight into the
// output (VisitStraightPieces; docs/streaming-merge.md).
#include <thread>

#include "common/partial/group_key.h"
#include "coordinator/merge/encoded_group_cursor.h"
#include "coordinator/merge/run_cursor.h"
#include "coordinator/run/merger.h"

namespace fanfold {

namespace {

// A group's row: its key's cells, then each state's finalized cells;
// adds each measure's skipped values and degraded groups.
Status FinalRow(const ReductionPlan& plan, std::string_view key,
                const std::vector<std::unique_ptr<MeasureState>>& states, std::vector<Cell>* row,
                std::vector<uint64_t>* skipped, std::vector<uint64_t>* degraded) {
  row->clear();
  row->reserve(plan.columns.size());
  FF_RETURN_IF_ERROR(DecodeKey(key, plan.group.size(), row));
  for (size_t m = 0; m < states.size(); ++m) {
    states[m]->Finalize(row);
    (*skipped)[m] += states[m]->skipped();
    (*degraded)[m] += states[m]->degraded() ? 1 : 0;
  }
  return Status::Ok();
}

// Adds one walk's per-measure counts to the totals.
void AddCounts(const std::vector<uint64_t>& skipped, const std::vector<uint64_t>& degraded,
               std::vector<uint64_t>* total_skipped, std::vector<uint64_t>* total_degraded) {
  for (size_t j = 0; j < total_skipped->size(); ++j) {
    (*total_skipped)[j] += skipped[j];
    (*total_degraded)[j] += degraded[j];
  }
}

// Walks `groups` (a run, or one piece of it), each group's states decoded
// and finalized into a row handed to visit; adds each measure's skipped
// values and degraded groups. `first_group` numbers the cursor's first
// group in the run (for messages).
Status WalkRunGroups(const ReductionPlan& plan, RunCursor& groups, uint64_t first_group,
                     const Merger::RowVisitor& visit, std::vector<uint64_t>* skipped,
                     std::vector<uint64_t>* degraded) {
  std::vector<std::unique_ptr<MeasureState>> states;
  for (const MeasureConfig& c : plan.configs) states.push_back(NewMeasureState(c));
  // The run holds each group's states as the in-memory table would encode
  // them; decoded one group at a time, they finalize to the same cells.
  std::vector<Cell> row;
  while (groups.Next()) {
    for (size_t m = 0; m < states.size(); ++m) {
      ByteReader sr(groups.state(m));
      Status s = states[m]->Decode(sr);
      if (!s.ok())
        return s.WithContext("the merged run, group " + std::to_string(first_group + groups.groups_read() - 1));
    }
    FF_RETURN_IF_ERROR(FinalRow(plan, groups.key(), states, &row, skipped, degraded));
    FF_RETURN_IF_ERROR(visit(&row));
  }
  if (!groups.status().ok()) return groups.status().WithContext("the merged run");
  return Status::Ok();
}

}  // namespace

Status Merger::VisitRunRows(size_t r, const RowVisitor& visit) {
  const ReductionPlan& plan = plan_->reductions[r];
  std::vector<uint64_t>& skipped = results_[r].skipped;
  std::vector<uint64_t>& degraded = results_[r].degraded;
  skipped.assign(plan.measures.size(), 0);
  degraded.assign(plan.measures.size(), 0);
  RunCursor groups = runs_->Cursor(r);
  return WalkRunGroups(plan, groups, 0, visit, &skipped, &degraded);
}

Status Merger::VisitRunPieces(size_t r, const PieceRowVisitor& visit, const PieceDone& done) {
  if (!complete()) return Status::Internal("Merger::VisitRunPieces before every shard was merged");
  if (consumed_) return Status::Internal("Merger::VisitRunPieces after the result was folded straight into the output");
  FoldPending();
  if (!fatal_.ok()) return fatal_;
  if (!runs_) return Status::Internal("Merger::VisitRunPieces without runs");
  const ReductionPlan& plan = plan_->reductions[r];
  const std::vector<RunPiece> pieces = runs_->Pieces(r);
  const size_t m = plan.configs.size();
  struct PieceWalk {
    Status status;
    std::vector<uint64_t> skipped, degraded;
    std::string_view first_key, last_key;  // views into the piece
    bool any = false;                      // it has a group
  };
  std::vector<PieceWalk> walks(pieces.size());
  const auto walk = [&](size_t p) {
    PieceWalk& w = walks[p];
    w.skipped.assign(plan.measures.size(), 0);
    w.degraded.assign(plan.measures.size(), 0);
    uint64_t first_group = 0;
    for (size_t i = 0; i < p; ++i) first_group += pieces[i].groups;
    RunCursor groups({pieces[p]}, m);
    w.status = WalkRunGroups(plan, groups, first_group, [&](std::vector<Cell>* row) {
      if (!w.any) w.first_key = groups.key();
      w.any = true;
      w.last_key = groups.key();
      return visit(p, row);
    }, &w.skipped, &w.degraded);
    if (const MappedFile* f = pieces[p].file) f->Release(0, pieces[p].body.size());
    done(p, w.status);
  };
  {
    std::vector<std::jthread> running;
    for (size_t p = 1; p < pieces.size(); ++p) running.emplace_back(walk, p);
    if (!pieces.empty()) walk(0);
  }
  std::vector<uint64_t>& skipped = results_[r].skipped;
  std::vector<uint64_t>& degraded = results_[r].degraded;
  skipped.assign(plan.measures.size(), 0);
  degraded.assign(plan.measures.size(), 0);
  std::string_view last;  // the last key of the pieces so far
  bool any = false;
  for (size_t p = 0; p < walks.size(); ++p) {
    if (!walks[p].status.ok()) return walks[p].status;
    if (any && walks[p].any && !EncodedGroupCursor::KeyLess(last, walks[p].first_key))
      return Status::Corrupt("piece " + std::to_string(p) +
                             " of the run: its first key is not above the previous piece's last")
          .WithContext("the merged run");
    if (walks[p].any) last = walks[p].last_key;
    any = any || walks[p].any;
    AddCounts(walks[p].skipped, walks[p].degraded, &skipped, &degraded);
  }
  return Status::Ok();
}

Status Merger::VisitStraightPieces(size_t r, size_t ranges, const PieceRowVisitor& visit, const PieceDone& done,
                                   bool* refold) {
  *refold = false;
  if (!complete() || !deferred_) return Status::Internal("Merger::VisitStraightPieces without a deferred last fold");
  const ReductionPlan& plan = plan_->reductions[r];
  struct RangeWalk {
    Status status;
    bool fold_failed = false;  // the fold's own failure, not the visitor's
    std::vector<uint64_t> skipped, degraded;
  };
  std::vector<RangeWalk> walks(ranges);
  const auto walk = [&](size_t p) {
    RangeWalk& w = walks[p];
    w.skipped.assign(plan.measures.size(), 0);
    w.degraded.assign(plan.measures.size(), 0);
    std::vector<Cell> row;
    // Each group's states, folded, finalize to the cells the run's walk
    // would give after encoding and decoding them (group_fold_test).
    const GroupFold::Visit to_row = [&](std::string_view key,
                                        const std::vector<std::unique_ptr<MeasureState>>& states) -> Status {
      FF_RETURN_IF_ERROR(FinalRow(plan, key, states, &row, &w.skipped, &w.degraded));
      return visit(p, &row);
    };
    bool visit_failed = false;
    FoldOutcome o = runs_->FoldStraight(p, to_row, &visit_failed);
    w.status = o.status;
    w.fold_failed = !o.status.ok() && !visit_failed;
    done(p, w.status);
  };
  {
    std::vector<std::jthread> running;
    for (size_t p = 1; p < ranges; ++p) running.emplace_back(walk, p);
    if (ranges > 0) walk(0);
  }
  std::vector<uint64_t>& skipped = results_[r].skipped;
  std::vector<uint64_t>& degraded = results_[r].degraded;
  skipped.assign(plan.measures.size(), 0);
  degraded.assign(plan.measures.size(), 0);
  for (const RangeWalk& w : walks) {  // the lowest range's failure first
    if (w.fold_failed) {
      *refold = true;
      return Status::Ok();
    }
    if (!w.status.ok()) return w.status;
    AddCounts(w.skipped, w.degraded, &skipped, &degraded);
  }
  return Status::Ok();
}

}  // namespace fanfold
