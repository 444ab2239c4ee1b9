// WriteResultStream: reduction r's result from the merge to its files, as a
// stream — each group finalized into a row as the merge hands it over
// (Merger::VisitRows), the rows step applied to it, then ordered and cut to
// emit.order/emit.limit in bounded memory (OrderedRows: a heap of `limit`
// rows, or sorted in memory, or sorted files under spill_dir merged), and
// written row by row (RowWriter) to the run directory's result file (every
// digit) and then to the shown output (a file, or stdout under the title;
// rounded as asked). Files are written atomically (temporary + rename).
// When the merge holds sorted runs, the result has no limit, is not the
// aligned table and goes to files only, the rows are first written
// straight to the files as they come, for as long as each one's sort key
// is above the last: when the merge's key-byte order is the result's
// (fixed-width text keys, for one) nothing is sorted. The first row out
// of order drops those files unpublished and the rows are walked again
// through the ordering above (at most one walk wasted, after a last fold
// straight into the output also that fold, done again). On that path the
// merge's walk (decode, finalize, rows step) runs on a thread of its own,
// handing rows in batches (RowPipe) to this one, which orders and writes;
// for CSV and NDJSON over a run of several pieces, each piece is walked,
// checked and formatted on its own thread and the text written in piece
// order (RangeTextQueue).
// The bytes are those of SortRows + RenderTable over the whole table,
// whatever the budget and path. Coordinator main thread only.
#pragma once

#include <cstdint>
#include <functional>
#include <string>

#include "common/base/status.h"
#include "common/job/plan.h"
#include "common/port/platform.h"
#include "coordinator/output/output_table.h"
#include "coordinator/output/rows_step.h"
#include "coordinator/run/merger.h"

namespace fanfold {

// The output stage's default share of the coordinator's memory (rows held
// while ordering them).
inline constexpr uint64_t kDefaultSortBytes = uint64_t{64} << 20;
// Smaller shares are raised to this: a share of a few rows would write a
// sort file per few rows and merge them over and over.
inline constexpr uint64_t kMinSortBytes = uint64_t{16} << 10;

struct ResultStreamTargets {
  Platform* platform = nullptr;
  std::string run_dir_file;  // the result file in the run directory (full path)
  std::string spill_dir;     // where sort files go (<run dir>/merge)
  bool shown = true;         // also write the shown copy
  std::string shown_path;    // "" = stdout
  std::string stdout_title;  // written on stdout before the result ("" = none)
  RenderOptions shown_options;
  uint64_t sort_bytes = kDefaultSortBytes;
  // Polled every few thousand rows; true stops the stage (Interrupted).
  std::function<bool()> should_stop;
};

struct ResultStreamOutcome {
  RowsStepCounts rows;        // what the rows step did
  uint64_t rows_written = 0;  // rows in the result
  uint64_t sort_files = 0;    // sort files written (0: ordered in memory)
  // The rows came in the result's order and went straight to the files,
  // never sorted (see WriteResultStream).
  bool streamed = false;
  // Tried that, but row number out_of_order_at (1-based, past the rows
  // step) came before the one ahead of it: the rows were then sorted.
  uint64_t out_of_order_at = 0;
  // The merge's last fold went straight into the rows (no last run written).
  bool straight = false;
  // It was tried, but the fold found a partial bad mid-walk: nothing of
  // that walk was kept, the merge folded again without it and the run
  // was walked.
  bool refolded = false;
};

// REQUIRES: merger complete; r a reduction of plan; targets.platform set.
// Every sort file is gone when it returns, whatever happened.
Result<ResultStreamOutcome> WriteResultStream(Merger& merger, const Plan& plan, size_t r,
                                              const ResultStreamTargets& targets);

// FANFOLD_TEST_ONLY_SORT_BYTES=N (tests only, never for users): the output
// stage's share in bytes, so small results spill. Returns fallback when
// unset; an error for text that is not a whole number.
Result<uint64_t> TestOnlySortBytes(uint64_t fallback);

}  // namespace fanfold
