// SpillFile: how a partial too big for a worker's shared-memory result area
// travels. The worker writes it to <dir>/<name> as temp file -> fsync ->
// rename, so the name never refers to half a file, and puts the name in its
// completion fields; the coordinator reads it back and deletes it.
// Stateless functions; thread-safe for distinct names.
#pragma once

#include <cstdint>
#include <string>
#include <string_view>

#include "common/base/status.h"

namespace fanfold {

// The spill file name for one completion: "<segment>-w<slot>-<seq>.partial".
std::string SpillFileName(std::string_view segment, uint32_t slot, uint64_t seq);

// True iff name is a plain file name: non-empty, no '/', no NUL, not "." or "..".
bool IsPlainFileName(std::string_view name);

// Writes bytes to <dir>/<name> atomically (temp + fsync + rename).
Status WriteSpillFile(const std::string& dir, const std::string& name, std::string_view bytes);

// Reads <dir>/<name> into *out and removes the file (also on a size
// mismatch). Fails unless its size is exactly expected_length.
Status TakeSpillFile(const std::string& dir, const std::string& name, uint64_t expected_length,
                     std::string* out);

}  // namespace fanfold
