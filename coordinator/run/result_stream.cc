#include "coordinator/run/result_stream.h"

#include <algorithm>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <memory>

#include "common/port/files/durable_write.h"
#include "common/port/files/file_util.h"
#include "coordinator/output/ordered_rows.h"
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
  // says none is alive).
  FF_RETURN_IF_ERROR(RemoveStaleSortFiles(platform, t.spill_dir));
  std::vector<std::string> columns = rp.columns;
  for (const AddedColumn& a : rp.rows.add) columns.push_back(a.name);
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
  const OutputFormat format = spec.emit.format;
  Result<std::unique_ptr<StagedFile>> kept = BeginFile(platform, t.run_dir_file);
  if (!kept.ok()) return kept.status();
  std::vector<Copy> copies = {ToFile(**kept, {})};
  std::unique_ptr<StagedFile> shown_file;
  Status shown_failed;
  if (t.shown && !t.shown_path.empty()) {
    const std::string parent = std::filesystem::path(t.shown_path).parent_path().string();
    if (!parent.empty()) (void)platform.CreateDirectories(parent);  // a failure shows when the file is made
    Result<std::unique_ptr<StagedFile>> f = BeginFile(platform, t.shown_path);
    if (f.ok()) {
      shown_file = std::move(*f);
      if (t.shown_options.rounds()) {
        copies.push_back(ToFile(*shown_file, t.shown_options));
      } else {  // the same bytes: rendered once, written to both
        StagedFile* a = kept->get();
        StagedFile* b = shown_file.get();
        copies.front().sink = [a, b](std::string_view bytes) {
          FF_RETURN_IF_ERROR(a->Append(bytes));
          return b->Append(bytes);
        };
      }
    } else {
      shown_failed = f.status();  // the run directory's copy is still written, as before streaming
    }
  }
  FF_RETURN_IF_ERROR(WriteRows(rows, format, columns, copies, t, &out.rows_written));
  FF_RETURN_IF_ERROR((*kept)->Publish());
  FF_RETURN_IF_ERROR(shown_failed);
  if (shown_file) FF_RETURN_IF_ERROR(shown_file->Publish());
  if (!t.shown || shown_file) return out;
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
