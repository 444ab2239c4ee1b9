#include "coordinator/run/result_stream.h"

#include <algorithm>
#include <cerrno>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <memory>
#include <thread>

#include "common/port/files/durable_write.h"
#include "common/port/files/file_util.h"
#include "common/port/process_control.h"
#include "coordinator/output/ordered_rows.h"
#include "coordinator/output/range_text_queue.h"
#include "coordinator/output/row_pipe.h"
#include "coordinator/output/row_sorter.h"
#include "coordinator/output/row_writer.h"
#include "coordinator/output/sort_key.h"

namespace fanfold {
namespace {

constexpr uint64_t kPollRows = 4096;  // rows between should_stop polls

Status StopStatus() { return Status::Interrupted("interrupted while writing the result"); }

// One copy of the result being written: its options and where its bytes go.
struct Copy {
  RenderOptions options;
  RowWriter::Sink sink;
};

// Writes the ordered rows in `format` to every copy, in one pass over the
// rows (two for the aligned table: its widths first).
Status WriteRows(const OrderedRows& rows, OutputFormat format, const std::vector<std::string>& columns,
                 const std::vector<Copy>& copies, const ResultStreamTargets& t, uint64_t* written) {
  uint64_t seen = 0;
  auto poll = [&]() { return ++seen % kPollRows == 0 && t.should_stop && t.should_stop(); };
  std::vector<TableWidths> widths;
  if (format == OutputFormat::kTable) {
    for (const Copy& c : copies) widths.emplace_back(columns, c.options);
    FF_RETURN_IF_ERROR(rows.Replay([&](const std::vector<Cell>& row) {
      if (poll()) return StopStatus();
      for (TableWidths& w : widths) w.Add(row);
      return Status::Ok();
    }));
  }
  std::vector<RowWriter> writers;
  writers.reserve(copies.size());
  for (size_t i = 0; i < copies.size(); ++i)
    writers.emplace_back(format, columns, copies[i].options,
                         widths.empty() ? std::vector<size_t>() : widths[i].widths(), copies[i].sink);
  for (RowWriter& w : writers) FF_RETURN_IF_ERROR(w.Begin());
  FF_RETURN_IF_ERROR(rows.Replay([&](const std::vector<Cell>& row) {
    if (poll()) return StopStatus();
    for (RowWriter& w : writers) FF_RETURN_IF_ERROR(w.Row(row));
    return Status::Ok();
  }));
  for (RowWriter& w : writers) FF_RETURN_IF_ERROR(w.End());
  *written = writers.empty() ? 0 : writers.front().rows();
  return Status::Ok();
}

Result<std::unique_ptr<StagedFile>> BeginFile(Platform& platform, const std::string& path) {
  return StagedFile::Begin(platform, path, AtomicFilePolicy());
}

Copy ToFile(StagedFile& f, RenderOptions options) {
  return {std::move(options), [&f](std::string_view bytes) { return f.Append(bytes); }};
}

// The files a result is written to: the run directory's copy, and the
// shown file when it is one (stdout is written after, from the ordered
// rows). Dropped unpublished, they remove their temporaries.
struct Files {
  std::unique_ptr<StagedFile> kept;
  std::unique_ptr<StagedFile> shown;
  Status shown_failed;  // the shown file could not be begun: reported after the kept copy is in place
  std::vector<Copy> copies;
};

Status OpenFiles(Platform& platform, const ResultStreamTargets& t, Files* f) {
  Result<std::unique_ptr<StagedFile>> kept = BeginFile(platform, t.run_dir_file);
  if (!kept.ok()) return kept.status();
  f->kept = std::move(*kept);
  f->copies = {ToFile(*f->kept, {})};
  if (!t.shown || t.shown_path.empty()) return Status::Ok();
  const std::string parent = std::filesystem::path(t.shown_path).parent_path().string();
  if (!parent.empty()) (void)platform.CreateDirectories(parent);  // a failure shows when the file is made
  Result<std::unique_ptr<StagedFile>> shown = BeginFile(platform, t.shown_path);
  if (!shown.ok()) {
    f->shown_failed = shown.status();  // the run directory's copy is still written, as before streaming
    return Status::Ok();
  }
  f->shown = std::move(*shown);
  if (t.shown_options.rounds()) {
    f->copies.push_back(ToFile(*f->shown, t.shown_options));
  } else {  // the same bytes: rendered once, written to both
    StagedFile* a = f->kept.get();
    StagedFile* b = f->shown.get();
    f->copies.front().sink = [a, b](std::string_view bytes) {
      FF_RETURN_IF_ERROR(a->Append(bytes));
      return b->Append(bytes);
    };
  }
  return Status::Ok();
}

// Publishes the kept copy, then the shown file (or reports why there is none).
Status PublishFiles(Files& f) {
  FF_RETURN_IF_ERROR(f.kept->Publish());
  FF_RETURN_IF_ERROR(f.shown_failed);
  if (f.shown) FF_RETURN_IF_ERROR(f.shown->Publish());
  return Status::Ok();
}

// `rest` is a temporary's name after ".NAME.tmp-": "PID@HOST-N" (HOST: HostTagForFiles) or "PID-N".
// True iff HOST is absent or this machine's and no process PID lives here.
bool WrittenByDeadLocalWriter(const std::string& rest) {
  const size_t digits = rest.find_first_not_of("0123456789");
  if (digits == 0 || digits == std::string::npos || digits > 9) return false;
  const size_t last_dash = rest.rfind('-');
  if (last_dash == std::string::npos || last_dash < digits || last_dash + 1 == rest.size() ||
      rest.find_first_not_of("0123456789", last_dash + 1) != std::string::npos)
    return false;
  if (rest[digits] == '@') {
    if (rest.compare(digits + 1, last_dash - digits - 1, HostTagForFiles()) != 0) return false;
  } else if (digits != last_dash) {
    return false;
  }
  return !ProcessAlive(std::stoi(rest.substr(0, digits)));
}

// Removes what a killed coordinator left of the result file `path`: its
// StagedFile temporaries (".NAME.tmp-PID@HOST-N" beside it; before hosts were
// named, ".NAME.tmp-PID-N"). In the run directory, which one coordinator
// holds at a time, every one of them; in a shown file's folder, which may
// have other writers (on other machines too, if the folder is shared), only
// those written on this machine (its host tag, or none) by a PID
// that is no longer alive here.
Status RemoveStaleTemporaries(Platform& platform, const std::string& path, bool only_dead_writers) {
  const std::filesystem::path p(path);
  const std::string dir = p.parent_path().empty() ? "." : p.parent_path().string();
  const std::string prefix = "." + p.filename().string() + ".tmp-";
  std::vector<std::string> names;
  if (!platform.Exists(dir)) return Status::Ok();
  if (OsError e = platform.ListDirectory(dir, &names); !e.ok()) return e.ToStatus("list", dir);
  for (const std::string& n : names) {
    if (n.compare(0, prefix.size(), prefix) != 0) continue;
    if (only_dead_writers && !WrittenByDeadLocalWriter(n.substr(prefix.size()))) continue;
    const std::string stale = (std::filesystem::path(dir) / n).string();
    if (OsError e = platform.Remove(stale); !e.ok() && e.code() != ENOENT) return e.ToStatus("remove", stale);
  }
  return Status::Ok();
}

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
Status StreamPiecesInOrder(Merger& merger, const Plan& plan, size_t r, const std::vector<std::string>& columns,
                           const ResultStreamTargets& t, ResultStreamOutcome* out, bool* streamed) {
  *streamed = false;
  const ReductionPlan& rp = plan.reductions[r];
  const ReductionSpec& spec = plan.spec.reductions[r];
  const std::vector<SortColumn> order = SortColumnsFor(columns, rp.group.size(), spec.emit.order);
  const size_t pieces = merger.run_pieces(r);
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
    walked = merger.VisitRunPieces(r, visit, done);
    queue.FinishRest(walked.ok() ? Status::Internal("a piece of the run was never walked") : walked);
  });
  bool in_order = true;
  Status written;
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
    if (!written.ok()) break;
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
  if (!in_order) return Status::Ok();  // files drops the temporaries
  FF_RETURN_IF_ERROR(written);
  FF_RETURN_IF_ERROR(walked);
  FF_RETURN_IF_ERROR(PublishFiles(files));
  out->rows = outs.front()->step.counts();
  for (size_t p = 1; p < pieces; ++p) out->rows.Add(outs[p]->step.counts());
  out->rows_written = before;
  out->sort_files = 0;
  out->streamed = true;
  *streamed = true;
  return Status::Ok();
}

}  // namespace

Result<uint64_t> TestOnlySortBytes(uint64_t fallback) {
  const char* sw = std::getenv("FANFOLD_TEST_ONLY_SORT_BYTES");
  if (sw == nullptr || *sw == '\0') return fallback;
  char* end = nullptr;
  const unsigned long long v = std::strtoull(sw, &end, 10);
  if (end == sw || *end != '\0' || *sw == '-')
    return Status::InvalidArgument(
        std::string("FANFOLD_TEST_ONLY_SORT_BYTES: expected a whole number of bytes, found '") + sw + "'");
  return static_cast<uint64_t>(v);
}

Result<ResultStreamOutcome> WriteResultStream(Merger& merger, const Plan& plan, size_t r,
                                              const ResultStreamTargets& t) {
  const ReductionPlan& rp = plan.reductions[r];
  const ReductionSpec& spec = plan.spec.reductions[r];
  Platform& platform = *t.platform;
  ResultStreamOutcome out;
  // Sort files of a coordinator that was killed (the run directory's lock
  // says none is alive), and its temporaries of this result file.
  FF_RETURN_IF_ERROR(RemoveStaleSortFiles(platform, t.spill_dir));
  FF_RETURN_IF_ERROR(RemoveStaleTemporaries(platform, t.run_dir_file, false));
  // The shown file's: best effort, it is not the run's own folder.
  if (t.shown && !t.shown_path.empty()) (void)RemoveStaleTemporaries(platform, t.shown_path, true);
  std::vector<std::string> columns = rp.columns;
  for (const AddedColumn& a : rp.rows.add) columns.push_back(a.name);
  const OutputFormat format = spec.emit.format;
  // Rows that may already come in the result's order are first tried
  // straight to the files: runs (walked in key-byte order), no limit (a
  // heap keeps few rows anyway), not the aligned table (it reads its rows
  // twice) and not stdout (written only once the kept copy is in place).
  if (merger.in_runs() && !spec.emit.limit && format != OutputFormat::kTable && (!t.shown || !t.shown_path.empty())) {
    bool streamed = false;
    // Pieces at once where a row's text stands alone (not JSON's array).
    const bool by_pieces = merger.run_pieces(r) > 1 && (format == OutputFormat::kCsv || format == OutputFormat::kNdjson);
    FF_RETURN_IF_ERROR(by_pieces ? StreamPiecesInOrder(merger, plan, r, columns, t, &out, &streamed)
                                 : StreamInOrder(merger, plan, r, columns, t, &out, &streamed));
    if (streamed) return out;
  }
  OrderedRows rows(SortColumnsFor(columns, rp.group.size(), spec.emit.order), spec.emit.limit,
                   std::max(t.sort_bytes, kMinSortBytes), platform, t.spill_dir);
  RowsStep step(rp.rows);
  uint64_t seen = 0;
  FF_RETURN_IF_ERROR(merger.VisitRows(r, [&](std::vector<Cell>* row) {
    if (++seen % kPollRows == 0 && t.should_stop && t.should_stop()) return StopStatus();
    return step.Apply(row) ? rows.Add(*row) : Status::Ok();
  }));
  out.rows = step.counts();
  FF_RETURN_IF_ERROR(rows.Finish());
  out.sort_files = rows.sort_files();
  // The run directory keeps every digit; only what the user reads is rounded.
  // Both are temporaries renamed into place at the end, the run directory's
  // first; a shown file is written in the same pass, stdout only after the
  // run directory's copy is in place (nothing shown of a result not kept).
  Files files;
  FF_RETURN_IF_ERROR(OpenFiles(platform, t, &files));
  FF_RETURN_IF_ERROR(WriteRows(rows, format, columns, files.copies, t, &out.rows_written));
  FF_RETURN_IF_ERROR(PublishFiles(files));
  if (!t.shown || !t.shown_path.empty()) return out;
  auto to_stdout = [](std::string_view bytes) {
    std::fwrite(bytes.data(), 1, bytes.size(), stdout);
    return std::ferror(stdout) ? Status::IoError("cannot write the result to stdout") : Status::Ok();
  };
  if (!t.stdout_title.empty()) FF_RETURN_IF_ERROR(to_stdout(t.stdout_title));
  FF_RETURN_IF_ERROR(WriteRows(rows, format, columns, {Copy{t.shown_options, to_stdout}}, t, &out.rows_written));
  std::fflush(stdout);
  if (std::ferror(stdout)) return Status::IoError("cannot write the result to stdout");
  return out;
}

}  // namespace fanfold
