// Whole-file helpers on the real file system with the durability rule of the
// run directory: every file is written to a temporary name in the same
// directory, fsynced, then renamed over the target (and the directory
// fsynced, best effort), so a crash leaves either the old file or the new
// one, never a torn one (common/port/files/durable_write.h). Errors name the path
// and the system's reason. Thread-safe (no shared state).
#pragma once

#include <string>
#include <string_view>

#include "common/base/status.h"
#include "common/port/files/durable_write.h"

namespace fanfold {

// The policy of WriteFileAtomic: a unique temporary name, fsync, best-effort
// directory sync.
const DurableWritePolicy& AtomicFilePolicy();

// Atomically replaces `path` with `data`.
Status WriteFileAtomic(const std::string& path, std::string_view data);

// Reads the whole file at path into *out.
Status ReadWholeFile(const std::string& path, std::string* out);

}  // namespace fanfold
