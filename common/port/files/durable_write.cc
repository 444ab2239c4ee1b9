#include "common/port/files/durable_write.h"

#include <cerrno>
#include <filesystem>
#include <random>

#include "common/port/process_control.h"

namespace fanfold {

StagedFile::StagedFile(Platform& platform, const DurableWritePolicy& policy, std::string target, std::string temp,
                       std::string dir, std::unique_ptr<WritableFile> file)
    : platform_(platform),
      policy_(policy),
      target_(std::move(target)),
      temp_(std::move(temp)),
      dir_(std::move(dir)),
      file_(std::move(file)) {}

StagedFile::~StagedFile() { Abandon(); }

Result<std::unique_ptr<StagedFile>> StagedFile::Begin(Platform& platform, const std::string& target,
                                                      const DurableWritePolicy& policy, std::string dir) {
  std::filesystem::path target_path(target);
  if (dir.empty()) {
    dir = target_path.parent_path().string();
    if (dir.empty()) dir = ".";
  }
  std::string temp;
  CreateMode mode = CreateMode::kTruncate;
  if (policy.temp_name == DurableWritePolicy::TempName::kUnique) {
    std::random_device rd;
    temp = (std::filesystem::path(dir) / ("." + target_path.filename().string() + ".tmp-" +
                                          std::to_string(platform.CurrentPid()) + "@" + HostTagForFiles() + "-" +
                                          std::to_string(rd())))
               .string();
    mode = CreateMode::kExclusive;
  } else {
    temp = target + ".tmp";
  }
  std::unique_ptr<WritableFile> file;
  OsError e = platform.OpenForWrite(temp, mode, policy.permissions, &file);
  if (!e.ok()) return e.ToStatus(policy.create_verb, temp);
  return std::unique_ptr<StagedFile>(new StagedFile(platform, policy, target, std::move(temp), std::move(dir),
                                                    std::move(file)));
}

void StagedFile::Abandon() {
  if (!file_) return;
  (void)file_->Close();  // the caller already has the error worth reporting
  file_.reset();
  (void)platform_.Remove(temp_);
}

Status StagedFile::Append(std::string_view data) {
  if (!file_) return OsError::Of("write", EBADF).ToStatus(policy_.write_verb, temp_);
  OsError e = file_->Append(data);
  if (e.ok()) return Status::Ok();
  Abandon();
  return e.ToStatus(policy_.write_verb, temp_);
}

Status StagedFile::Publish() {
  if (!file_) return OsError::Of("write", EBADF).ToStatus(policy_.write_verb, temp_);
  OsError e = file_->Sync(policy_.sync);
  if (!e.ok()) {
    Abandon();
    return e.ToStatus(policy_.sync_verb, temp_);
  }
  (void)file_->Close();  // synced already: a close error cannot lose data
  file_.reset();
  e = platform_.Rename(temp_, target_);
  if (!e.ok()) {
    (void)platform_.Remove(temp_);
    return e.ToStatus(policy_.rename_verb, target_);
  }
  renamed_ = true;
  if (policy_.dir_sync == DurableWritePolicy::DirSync::kNone) return Status::Ok();
  e = platform_.SyncDirectory(dir_);
  if (e.ok() || policy_.dir_sync == DurableWritePolicy::DirSync::kBestEffort) return Status::Ok();
  if (e.code() == EINVAL && std::string_view(e.call()) == "fsync") return Status::Ok();
  return e.ToStatus(dir_);
}

Status WriteFileDurably(Platform& platform, const std::string& path, std::string_view data,
                        const DurableWritePolicy& policy) {
  Result<std::unique_ptr<StagedFile>> staged = StagedFile::Begin(platform, path, policy);
  if (!staged.ok()) return staged.status();
  FF_RETURN_IF_ERROR((*staged)->Append(data));
  return (*staged)->Publish();
}

}  // namespace fanfold
