// SpillFolder: the run directory's merge/ folder, where the coordinator's
// merge keeps the runs that do not fit its memory share
// (docs/streaming-merge.md, docs/run-directory.md). Nothing in it survives
// the process: Open() removes what a killed coordinator left (so `run`,
// `resume`, `refresh` and `merge` start without it), the destructor removes
// the folder on every way out (success, error, interruption), and a run is
// always rebuilt from the committed partials, which never live here. Its
// files are written without syncing, for the same reason. Files are made
// and removed through the Platform (a MemoryPlatform serves tests of the
// writing side) but read back mapped (MappedFile), from the real file
// system. Owned by the coordinator's run; NewFile may be called from
// several threads.
#pragma once

#include <atomic>
#include <cstdint>
#include <memory>
#include <string>

#include "common/base/status.h"
#include "common/port/platform.h"

namespace fanfold {

class SpillFolder {
 public:
  // The folder's name in a run directory.
  static constexpr const char* kName = "merge";

  // REQUIRES: platform outlives the folder. Removes path and what it holds
  // (a folder left by a killed process); the folder itself is created by
  // the first NewFile.
  static Result<std::unique_ptr<SpillFolder>> Open(const std::string& path, Platform& platform = Platform::Posix());
  ~SpillFolder();
  SpillFolder(const SpillFolder&) = delete;
  SpillFolder& operator=(const SpillFolder&) = delete;

  const std::string& path() const { return path_; }
  std::string PathOf(const std::string& name) const { return path_ + "/" + name; }

  // Creates (or truncates) the file `name` in the folder for writing.
  Result<std::unique_ptr<WritableFile>> NewFile(const std::string& name);
  // Removes the file `name` (missing is fine).
  void RemoveFile(const std::string& name);

  // Bytes written into the folder's files so far (by callers' Count).
  void Count(uint64_t bytes) { written_ += bytes; }
  uint64_t bytes_written() const { return written_; }

 private:
  SpillFolder(Platform& platform, std::string path) : platform_(platform), path_(std::move(path)) {}
  Platform& platform_;
  std::string path_;
  std::atomic<bool> created_{false};
  std::atomic<uint64_t> written_{0};
};

}  // namespace fanfold
