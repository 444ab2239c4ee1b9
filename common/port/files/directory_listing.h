// ListDirectoryEntries: the names in one directory with the type the
// listing itself gives (readdir's d_type), so that a glob over thousands of
// files neither stats each one nor builds a std::filesystem::path per
// entry. "." and ".." are left out; the order is the directory's own.
// Stateless; thread-safe.
#pragma once

#include <string>
#include <vector>

#include "common/port/os_error.h"

namespace fanfold {

struct DirectoryEntry {
  // kUnknown: the file system did not say (stat it to know); kSymlink: the
  // link itself (stat follows it).
  enum class Type { kFile, kDirectory, kSymlink, kOther, kUnknown };
  std::string name;
  Type type = Type::kUnknown;
};

// Replaces *out with the entries of dir. Fails (naming opendir or readdir)
// iff dir cannot be listed.
OsError ListDirectoryEntries(const std::string& dir, std::vector<DirectoryEntry>* out);

}  // namespace fanfold
