#include "coordinator/run/result/result_stream.h"

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
#include "coordinator/output/row_sorter.h"
#include "coordinator/output/row_writer.h"
#include "coordinator/output/sort_key.h"
#include "coordinator/run/result/in_order_stream.h"
#include "coordinator/run/result/result_files.h"

namespace fanfold {
namespace {

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
    bool refold = false;
    // Where a row's text stands alone (not JSON's array), pieces at once,
    // and the merge's last fold, when it waits, straight into the rows.
    const bool text_rows = format == OutputFormat::kCsv || format == OutputFormat::kNdjson;
    const size_t straight = merger.last_fold_pending() && text_rows ? merger.PrepareStraight(r) : 0;
    if (straight > 0) {
      FF_RETURN_IF_ERROR(StreamPiecesInOrder(merger, plan, r, columns, t, straight, &out, &streamed, &refold));
      if (streamed) return out;
    }
    if (straight == 0 || refold) {
      merger.FoldPending();
      out = ResultStreamOutcome{};
      out.refolded = refold;
      const bool by_pieces = merger.run_pieces(r) > 1 && text_rows;
      FF_RETURN_IF_ERROR(by_pieces ? StreamPiecesInOrder(merger, plan, r, columns, t, 0, &out, &streamed, &refold)
                                   : StreamInOrder(merger, plan, r, columns, t, &out, &streamed));
      if (streamed) return out;
    }
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
