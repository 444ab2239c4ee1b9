#include "coordinator/run/result/in_order_stream.h"

#include <algorithm>
#include <memory>
#include <thread>

#include "coordinator/output/range_text_queue.h"
#include "coordinator/output/row_pipe.h"
#include "coordinator/output/row_writer.h"
#include "coordinator/output/rows_step.h"
#include "coordinator/output/sort_key.h"
#include "coordinator/run/result/result_files.h"

namespace fanfold {

// The optimistic path: rows written to the files as the merge hands them
// over, for as long as each row's sort key is above the one before (the
// merge walks runs in key-byte order, which is the result's own for many
// keys, e.g. fixed-width text). The first row below its predecessor stops
// the walk: the files are dropped unpublished (nothing of them is kept)
// and *streamed is false, so the caller orders every row from a new walk.
// At most one walk and its writing are wasted; when the rows were in
// order, they never pass through the sort's encode, arena and decode.
Status StreamInOrder(Merger& merger, const Plan& plan, size_t r, const std::vector<std::string>& columns,
                     const ResultStreamTargets& t, ResultStreamOutcome* out, bool* streamed) {
  *streamed = false;
  const ReductionPlan& rp = plan.reductions[r];
  const ReductionSpec& spec = plan.spec.reductions[r];
  const std::vector<SortColumn> order = SortColumnsFor(columns, rp.group.size(), spec.emit.order);
  Files files;
  FF_RETURN_IF_ERROR(OpenFiles(*t.platform, t, &files));
  std::vector<RowWriter> writers;
  writers.reserve(files.copies.size());
  for (const Copy& c : files.copies) writers.emplace_back(spec.emit.format, columns, c.options, std::vector<size_t>(), c.sink);
  for (RowWriter& w : writers) FF_RETURN_IF_ERROR(w.Begin());
  // The merge's walk (decoding, finalizing, the rows step) runs on a thread
  // of its own; this one orders and writes. Nothing else touches the
  // merger meanwhile.
  RowsStep step(rp.rows);
  RowPipe pipe;
  Status walked;
  std::thread walker([&] {
    uint64_t visited = 0;
    walked = merger.VisitRows(r, [&](std::vector<Cell>* row) {
      // The walk polls too: rows the rows step drops never reach the
      // writing thread, which polls once per batch it receives.
      if (++visited % kPollRows == 0 && t.should_stop && t.should_stop()) return StopStatus();
      if (!step.Apply(row)) return Status::Ok();
      return pipe.Put(row) ? Status::Ok() : Status::Interrupted("the result's writers stopped");
    });
    pipe.Finish();
  });
  std::string prev, key;
  uint64_t arrival = 0;
  bool in_order = true;
  auto write = [&]() -> Status {
    std::vector<Cell>* rows = nullptr;
    for (size_t n; (n = pipe.Next(&rows)) > 0;) {
      if (t.should_stop && t.should_stop()) return StopStatus();  // a poll every batch
      for (size_t i = 0; i < n; ++i) {
        key.clear();
        AppendSortKey(rows[i], order, arrival++, &key);
        if (arrival > 1 && !(prev < key)) {
          in_order = false;
          out->out_of_order_at = arrival;
          return Status::Ok();
        }
        prev.swap(key);
        for (RowWriter& w : writers) FF_RETURN_IF_ERROR(w.Row(rows[i]));
      }
    }
    return Status::Ok();
  };
  const Status written = write();
  pipe.Close();  // a walk still going stops at its next full batch
  walker.join();
  if (!in_order) return Status::Ok();  // files drops the temporaries
  FF_RETURN_IF_ERROR(written);
  FF_RETURN_IF_ERROR(walked);
  for (RowWriter& w : writers) FF_RETURN_IF_ERROR(w.End());
  FF_RETURN_IF_ERROR(PublishFiles(files));
  out->rows = step.counts();
  out->rows_written = writers.front().rows();
  out->sort_files = 0;
  out->streamed = true;
  *streamed = true;
  return Status::Ok();
}

namespace {

// One piece's share of StreamPiecesInOrder: its rows step, in-order
// check and writers, on the piece's thread.
struct PieceOutput {
  explicit PieceOutput(const RowsPlan& rows) : step(rows) {}
  RowsStep step;
  std::vector<RowWriter> writers;  // per copy, without Begin/End (CSV, NDJSON)
  RangeTextQueue::Chunk chunk;     // per copy: text not yet queued
  std::string prev, key;           // sort keys of the last row and this one
  uint64_t visited = 0;            // rows the merge gave
  uint64_t rows = 0;               // rows past the step (their local arrival numbers)
  uint64_t broke_at = 0;           // 1-based row below the one ahead of it (0: none)
  std::string first_cells, last_cells;  // the first and last rows' sort keys without arrival
};

constexpr size_t kPieceChunkBytes = size_t{256} << 10;

std::string_view Cells(const std::string& sort_key) {  // without the 8-byte arrival number
  return std::string_view(sort_key).substr(0, sort_key.size() - 8);
}

}  // namespace

// StreamInOrder for CSV and NDJSON (a row's text does not depend on the
// rows before it) when the run has several pieces (the key ranges of its
// last fold): each piece's rows are finalized, checked and formatted on
// the piece's own thread (Merger::VisitRunPieces) into text chunks that a
// RangeTextQueue hands to this thread in piece order, which writes them.
// Each piece checks its rows' order with its own arrival numbers (they
// ascend as the global ones do); where two pieces meet, the earlier
// piece's last row must not sort after the later's first (equal cells:
// arrival order, which is theirs). The same bytes and outcome as
// StreamInOrder, whose row number for an out-of-order row it reports too.
// The pieces may also be the key ranges of the merge's last fold, folded
// straight into the rows (Merger::VisitStraightPieces): nothing is
// published unless every range folded, so a partial found bad mid-walk
// leaves no output (*refold; the caller folds the usual way and walks
// the run).
Status StreamPiecesInOrder(Merger& merger, const Plan& plan, size_t r, const std::vector<std::string>& columns,
                           const ResultStreamTargets& t, size_t straight, ResultStreamOutcome* out, bool* streamed,
                           bool* refold) {
  *streamed = false;
  *refold = false;
  const ReductionPlan& rp = plan.reductions[r];
  const ReductionSpec& spec = plan.spec.reductions[r];
  const std::vector<SortColumn> order = SortColumnsFor(columns, rp.group.size(), spec.emit.order);
  const size_t pieces = straight > 0 ? straight : merger.run_pieces(r);
  Files files;
  FF_RETURN_IF_ERROR(OpenFiles(*t.platform, t, &files));
  const size_t copies = files.copies.size();
  for (const Copy& c : files.copies) {  // the header
    RowWriter head(spec.emit.format, columns, c.options, std::vector<size_t>(), c.sink);
    FF_RETURN_IF_ERROR(head.Begin());
    FF_RETURN_IF_ERROR(head.End());
  }
  std::vector<std::unique_ptr<PieceOutput>> outs;
  for (size_t p = 0; p < pieces; ++p) {
    outs.push_back(std::make_unique<PieceOutput>(rp.rows));
    PieceOutput& po = *outs.back();
    po.chunk.assign(copies, std::string());
    po.writers.reserve(copies);
    for (size_t c = 0; c < copies; ++c) {
      po.writers.emplace_back(spec.emit.format, columns, files.copies[c].options, std::vector<size_t>(),
                              [&po, c](std::string_view bytes) {
                                po.chunk[c].append(bytes);
                                return Status::Ok();
                              });
      po.writers.back().set_flush_bytes(SIZE_MAX);  // text moves in chunks (below)
    }
  }
  RangeTextQueue queue(pieces, std::max(t.sort_bytes, kMinSortBytes) / 2);
  const Status out_of_order = Status::Interrupted("a row came out of order");
  const auto queue_chunk = [&](size_t p) {
    PieceOutput& po = *outs[p];
    for (RowWriter& w : po.writers) FF_RETURN_IF_ERROR(w.Flush());
    if (!queue.Put(p, &po.chunk)) return Status::Interrupted("the result's writers stopped");
    po.chunk.assign(copies, std::string());
    return Status::Ok();
  };
  const auto visit = [&](size_t p, std::vector<Cell>* row) -> Status {
    PieceOutput& po = *outs[p];
    if (++po.visited % kPollRows == 0 && t.should_stop && t.should_stop()) return StopStatus();
    if (!po.step.Apply(row)) return Status::Ok();
    po.key.clear();
    AppendSortKey(*row, order, po.rows++, &po.key);
    if (po.rows == 1) {
      po.first_cells = Cells(po.key);
    } else if (!(po.prev < po.key)) {
      po.broke_at = po.rows;
      return out_of_order;
    }
    po.prev.swap(po.key);
    for (RowWriter& w : po.writers) FF_RETURN_IF_ERROR(w.Row(*row));
    return po.writers.front().held() >= kPieceChunkBytes ? queue_chunk(p) : Status::Ok();
  };
  const auto done = [&](size_t p, const Status& walked) {
    PieceOutput& po = *outs[p];
    Status s = walked;
    if (po.rows > 0 && po.broke_at == 0) po.last_cells = Cells(po.prev);
    if (s.ok()) s = queue_chunk(p);
    queue.Finish(p, std::move(s));
  };
  Status walked;
  std::thread walker([&] {
    walked = straight > 0 ? merger.VisitStraightPieces(r, pieces, visit, done, refold)
                          : merger.VisitRunPieces(r, visit, done);
    queue.FinishRest(walked.ok() ? Status::Internal("a piece of the run was never walked") : walked);
  });
  bool in_order = true;
  Status written;
  bool write_failed = false;  // written is a stop or a sink's error, not a piece's
  uint64_t before = 0;      // rows of the pieces before
  std::string last_cells;  // the last row's so far
  for (size_t p = 0; p < pieces && in_order && written.ok(); ++p) {
    if (p > 0) queue.Advance();
    RangeTextQueue::Chunk chunk;
    Status outcome;
    while (written.ok() && queue.Next(&chunk, &outcome)) {
      if (t.should_stop && t.should_stop()) written = StopStatus();  // a poll every chunk
      for (size_t c = 0; c < copies && written.ok(); ++c) written = files.copies[c].sink(chunk[c]);
    }
    if (!written.ok()) {
      write_failed = true;
      break;
    }
    const PieceOutput& po = *outs[p];
    if (po.broke_at > 0) {
      in_order = false;
      out->out_of_order_at = before + po.broke_at;
    } else if (!outcome.ok()) {
      written = outcome;
    } else if (po.rows > 0) {
      if (before > 0 && last_cells > po.first_cells) {
        in_order = false;
        out->out_of_order_at = before + 1;
      }
      last_cells = po.last_cells;
    }
    before += po.rows;
  }
  queue.Close();  // walks still going stop at their next chunk
  walker.join();
  if (write_failed) return written;    // a stop or a full disk comes first: no refold to redo it
  if (*refold) return Status::Ok();    // files drops the temporaries
  if (!in_order) return Status::Ok();  // likewise
  FF_RETURN_IF_ERROR(written);
  FF_RETURN_IF_ERROR(walked);
  FF_RETURN_IF_ERROR(PublishFiles(files));
  if (straight > 0) merger.ConsumeStraight();
  out->straight = straight > 0;
  out->rows = outs.front()->step.counts();
  for (size_t p = 1; p < pieces; ++p) out->rows.Add(outs[p]->step.counts());
  out->rows_written = before;
  out->sort_files = 0;
  out->streamed = true;
  *streamed = true;
  return Status::Ok();
}

}  // namespace fanfold
