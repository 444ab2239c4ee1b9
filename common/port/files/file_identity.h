// FileIdentity: what fanfold takes as "the same input file" — its size and
// its modification time in nanoseconds. The shard list records it, the worker
// stamps it into each partial, and `resume` compares it to decide what to
// recompute. Values; thread-safe.
#pragma once

#include <cstdint>
#include <string>

#include "common/port/os_error.h"

namespace fanfold {

struct FileIdentity {
  uint64_t size = 0;
  int64_t mtime_ns = 0;  // st_mtim, seconds * 1e9 + nanoseconds

  bool operator==(const FileIdentity&) const = default;
};

// stat()s path (following symbolic links) into *out; *out is untouched on error.
OsError IdentifyFile(const std::string& path, FileIdentity* out);

}  // namespace fanfold
