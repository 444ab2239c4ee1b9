// The output stage's optimistic path (coordinator/run/result/result_stream.h):
// rows written straight to the result's files as the merge walks its
// runs, for as long as each row sorts above the one before; the first row
// out of order drops the files unpublished and the caller orders the rows.
// StreamInOrder walks one run; StreamPiecesInOrder (CSV, NDJSON) walks a
// run's pieces, or the merge's last fold folded straight into rows (its
// key ranges), each on a thread of its own, the text written in piece
// order. Coordinator main thread only.
#pragma once

#include <string>
#include <vector>

#include "common/base/status.h"
#include "common/job/plan.h"
#include "coordinator/run/merger.h"
#include "coordinator/run/result/result_stream.h"

namespace fanfold {

// *streamed: the rows were in order and the files are published (else
// nothing of them is left and out->out_of_order_at says where the order
// broke).
Status StreamInOrder(Merger& merger, const Plan& plan, size_t r, const std::vector<std::string>& columns,
                     const ResultStreamTargets& t, ResultStreamOutcome* out, bool* streamed);

// With `straight` the pieces are the ranges of the merge's deferred last
// fold (Merger::PrepareStraight gave `straight` > 0 of them) and, when that
// fold fails mid-walk, *refold is set and Ok returned, nothing written:
// the caller folds the usual way (Merger::FoldPending) and walks again.
// Without, the run's pieces (Merger::run_pieces).
Status StreamPiecesInOrder(Merger& merger, const Plan& plan, size_t r, const std::vector<std::string>& columns,
                           const ResultStreamTargets& t, size_t straight, ResultStreamOutcome* out, bool* streamed,
                           bool* refold);

}  // namespace fanfold
