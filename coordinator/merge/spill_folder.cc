#include "coordinator/merge/spill_folder.h"

namespace fanfold {

Result<std::unique_ptr<SpillFolder>> SpillFolder::Open(const std::string& path, Platform& platform) {
  if (OsError e = platform.RemoveTree(path); !e.ok()) return e.ToStatus("remove the merge's old spill folder", path);
  return std::unique_ptr<SpillFolder>(new SpillFolder(platform, path));
}

SpillFolder::~SpillFolder() { (void)platform_.RemoveTree(path_); }

Result<std::unique_ptr<WritableFile>> SpillFolder::NewFile(const std::string& name) {
  if (!created_.load()) {
    if (OsError e = platform_.CreateDirectories(path_); !e.ok())
      return e.ToStatus("create the merge's spill folder", path_);
    created_.store(true);
  }
  std::unique_ptr<WritableFile> f;
  const std::string p = PathOf(name);
  if (OsError e = platform_.OpenForWrite(p, CreateMode::kTruncate, 0600, &f); !e.ok())
    return e.ToStatus("create the merge's spill file", p);
  return f;
}

void SpillFolder::RemoveFile(const std::string& name) { (void)platform_.Remove(PathOf(name)); }

}  // namespace fanfold
