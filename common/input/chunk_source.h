// ChunkSource: the bytes of one chunk of a large uncompressed NDJSON file —
// every line whose first byte lies in [offset, offset + length), whole, and
// nothing else. Consecutive chunks of one file therefore hold each line
// exactly once, however the cut points fall; its compressed_bytes() counts
// those bytes only, so the chunks of a file add up to the file's size. Wraps
// the file's plain source; not thread-safe.
#pragma once

#include <cstdint>
#include <memory>
#include <string>

#include "common/input/byte_source.h"

namespace fanfold {

// Opens the chunk [offset, offset + length) of the plain file at path.
Result<std::unique_ptr<ByteSource>> OpenChunkSource(const std::string& path, uint64_t offset, uint64_t length);

}  // namespace fanfold
