#include "coordinator/run/result_stream.h"

#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <memory>

#include "common/port/durable_write.h"
#include "common/port/file_util.h"
#include "coordinator/output/ordered_rows.h"
#include "coordinator/output/row_sorter.h"
#include "coordinator/output/row_writer.h"
#include "coordinator/output/sort_key.h"

namespace fanfold {
namespace {

constexpr uint64_t kPollRows = 4096;  // rows between should_stop polls

Status StopStatus() { return Status::Interrupted("interrupted while writing the result"); }

// Writes the ordered rows once in `format` with `options` through sink.
Status WriteRows(const OrderedRows& rows, OutputFormat format, const std::vector<std::string>& columns,
                 const RenderOptions& options, const ResultStreamTargets& t, const RowWriter::Sink& sink,
                 uint64_t* written) {
  std::vector<size_t> widths;
  uint64_t seen = 0;
  auto poll = [&]() { return ++seen % kPollRows == 0 && t.should_stop && t.should_stop(); };
  if (format == OutputFormat::kTable) {  // the widths first: a pass over the rows
    TableWidths w(columns, options);
    FF_RETURN_IF_ERROR(rows.Replay([&](const std::vector<Cell>& row) {
      if (poll()) return StopStatus();
      w.Add(row);
      return Status::Ok();
    }));
    widths = w.widths();
  }
  RowWriter writer(format, columns, options, std::move(widths), sink);
  FF_RETURN_IF_ERROR(writer.Begin());
  FF_RETURN_IF_ERROR(rows.Replay([&](const std::vector<Cell>& row) {
    if (poll()) return StopStatus();
    return writer.Row(row);
  }));
  FF_RETURN_IF_ERROR(writer.End());
  *written = writer.rows();
  return Status::Ok();
}

// Writes the rows to path atomically: a temporary beside it, renamed over it.
Status WriteRowsToFile(Platform& platform, const std::string& path, const OrderedRows& rows, OutputFormat format,
                       const std::vector<std::string>& columns, const RenderOptions& options,
                       const ResultStreamTargets& t, uint64_t* written) {
  Result<std::unique_ptr<StagedFile>> file = StagedFile::Begin(platform, path, AtomicFilePolicy());
  if (!file.ok()) return file.status();
  StagedFile& f = **file;
  FF_RETURN_IF_ERROR(
      WriteRows(rows, format, columns, options, t, [&](std::string_view bytes) { return f.Append(bytes); }, written));
  return f.Publish();
}

}  // namespace

Result<uint64_t> TestOnlySortBytes(uint64_t fallback) {
  const char* sw = std::getenv("FANFOLD_TEST_ONLY_SORT_BYTES");
  if (sw == nullptr || *sw == '\0') return fallback;
  char* end = nullptr;
  const unsigned long long v = std::strtoull(sw, &end, 10);
  if (end == sw || *end != '\0' || *sw == '-')
    return Status::InvalidArgument(std::string("FANFOLD_TEST_ONLY_SORT_BYTES: expected a whole number of bytes, found '") +
                                   sw + "'");
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
  OrderedRows rows(SortColumnsFor(columns, rp.group.size(), spec.emit.order), spec.emit.limit, t.sort_bytes,
                   platform, t.spill_dir);
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
  FF_RETURN_IF_ERROR(
      WriteRowsToFile(platform, t.run_dir_file, rows, spec.emit.format, columns, {}, t, &out.rows_written));
  if (!t.shown) return out;
  if (!t.shown_path.empty()) {
    const std::string parent = std::filesystem::path(t.shown_path).parent_path().string();
    if (!parent.empty()) (void)platform.CreateDirectories(parent);  // a failure shows when the file is made
    FF_RETURN_IF_ERROR(WriteRowsToFile(platform, t.shown_path, rows, spec.emit.format, columns, t.shown_options, t,
                                       &out.rows_written));
    return out;
  }
  auto to_stdout = [](std::string_view bytes) {
    std::fwrite(bytes.data(), 1, bytes.size(), stdout);
    return std::ferror(stdout) ? Status::IoError("cannot write the result to stdout") : Status::Ok();
  };
  if (!t.stdout_title.empty()) FF_RETURN_IF_ERROR(to_stdout(t.stdout_title));
  FF_RETURN_IF_ERROR(WriteRows(rows, spec.emit.format, columns, t.shown_options, t, to_stdout, &out.rows_written));
  std::fflush(stdout);
  if (std::ferror(stdout)) return Status::IoError("cannot write the result to stdout");
  return out;
}

}  // namespace fanfold
