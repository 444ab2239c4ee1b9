// DurableWrite: the one way fanfold makes a file appear whole or not at all:
// write a temporary file in the same directory, sync it, rename it over the
// target, sync the directory. The policy says how the temporary is named,
// how deep the syncs go and how errors are worded, so the run directory, the
// spill files and plain output files share one routine. A StagedFile is owned
// by one thread at a time; the functions are thread-safe.
#pragma once

#include <memory>
#include <string>
#include <string_view>

#include "common/base/status.h"
#include "common/port/platform.h"

namespace fanfold {

struct DurableWritePolicy {
  // kUnique: ".<name>.tmp-<pid>@<host>-<random>" (host: HostTagForFiles),
  // created exclusively, so writers in several processes never share one and
  // a cleaner can tell whether the writer ran on its own machine; kSuffix: "<name>.tmp", emptied first
  // (for a name only one writer ever uses).
  enum class TempName { kUnique, kSuffix };
  // kBestEffort ignores a directory that cannot be synced (some filesystems
  // refuse); kRequired reports it, except EINVAL (the directory cannot be
  // synced at all).
  enum class DirSync { kNone, kBestEffort, kRequired };

  TempName temp_name = TempName::kUnique;
  unsigned permissions = 0644;
  SyncDepth sync = SyncDepth::kFull;
  DirSync dir_sync = DirSync::kBestEffort;
  // Errors read "cannot <verb> '<path>': <reason>": create, write and sync
  // name the temporary, rename the target, and a directory sync the
  // directory with the failed call's own name ("open", "fsync").
  const char* create_verb = "create";
  const char* write_verb = "write";
  const char* sync_verb = "fsync";
  const char* rename_verb = "rename into";
};

// A temporary file filling up on its way to `target`. Destroying one that
// was not published closes and removes the temporary.
class StagedFile {
 public:
  // Creates the temporary for target. dir is the directory synced on
  // Publish (the target's own; empty: computed from target).
  // REQUIRES: platform and policy outlive the StagedFile.
  static Result<std::unique_ptr<StagedFile>> Begin(Platform& platform, const std::string& target,
                                                   const DurableWritePolicy& policy, std::string dir = {});
  ~StagedFile();
  StagedFile(const StagedFile&) = delete;
  StagedFile& operator=(const StagedFile&) = delete;

  // Appends data. On an error the temporary is removed and every later call fails.
  Status Append(std::string_view data);
  // Syncs and closes the temporary, renames it over the target and syncs the
  // directory as the policy says. On an error before the rename the
  // temporary is removed. Call at most once.
  Status Publish();

  const std::string& temp_path() const { return temp_; }
  // True iff Publish got as far as the rename (only the directory sync may have failed).
  bool renamed() const { return renamed_; }

 private:
  StagedFile(Platform& platform, const DurableWritePolicy& policy, std::string target, std::string temp,
             std::string dir, std::unique_ptr<WritableFile> file);
  // Closes and removes the temporary, ignoring errors (the caller reports the first one).
  void Abandon();

  Platform& platform_;
  const DurableWritePolicy& policy_;
  std::string target_;
  std::string temp_;
  std::string dir_;
  std::unique_ptr<WritableFile> file_;  // null once closed or abandoned
  bool renamed_ = false;
};

// Replaces path with data: Begin + Append + Publish.
Status WriteFileDurably(Platform& platform, const std::string& path, std::string_view data,
                        const DurableWritePolicy& policy);

}  // namespace fanfold
