#include "coordinator/run/result/result_files.h"

#include <filesystem>

#include "common/port/files/file_util.h"

namespace fanfold {
namespace {

Result<std::unique_ptr<StagedFile>> BeginFile(Platform& platform, const std::string& path) {
  return StagedFile::Begin(platform, path, AtomicFilePolicy());
}

Copy ToFile(StagedFile& f, RenderOptions options) {
  return {std::move(options), [&f](std::string_view bytes) { return f.Append(bytes); }};
}

}  // namespace

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

Status PublishFiles(Files& f) {
  FF_RETURN_IF_ERROR(f.kept->Publish());
  FF_RETURN_IF_ERROR(f.shown_failed);
  if (f.shown) FF_RETURN_IF_ERROR(f.shown->Publish());
  return Status::Ok();
}

}  // namespace fanfold
