#include "common/port/files/directory_listing.h"

#include <dirent.h>

#include <cerrno>
#include <cstring>

namespace fanfold {

OsError ListDirectoryEntries(const std::string& dir, std::vector<DirectoryEntry>* out) {
  out->clear();
  DIR* d = ::opendir(dir.empty() ? "." : dir.c_str());
  if (d == nullptr) return OsError::Of("opendir", errno);
  for (;;) {
    errno = 0;
    const dirent* e = ::readdir(d);
    if (e == nullptr) break;
    if (std::strcmp(e->d_name, ".") == 0 || std::strcmp(e->d_name, "..") == 0) continue;
    DirectoryEntry entry;
    entry.name = e->d_name;
    switch (e->d_type) {
      case DT_REG: entry.type = DirectoryEntry::Type::kFile; break;
      case DT_DIR: entry.type = DirectoryEntry::Type::kDirectory; break;
      case DT_LNK: entry.type = DirectoryEntry::Type::kSymlink; break;
      case DT_UNKNOWN: entry.type = DirectoryEntry::Type::kUnknown; break;
      default: entry.type = DirectoryEntry::Type::kOther; break;
    }
    out->push_back(std::move(entry));
  }
  const int err = errno;
  ::closedir(d);
  return err != 0 ? OsError::Of("readdir", err) : OsError::Ok();
}

}  // namespace fanfold
