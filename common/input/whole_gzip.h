// WholeGzip: reads a gzip shard that fits in memory in one piece — the whole
// file read at once, each member decompressed in one libdeflate call into
// one buffer — instead of zlib's streaming inflate. It takes a file of at
// most kWholeGzipMaxFileBytes that decompresses to at most
// kWholeGzipMaxOutputBytes, member after member (RFC 1952 section 2.2; the
// buffer starts at the last member's ISIZE from the trailer, section 2.3.1,
// and doubles when a member does not fit). Otherwise it declines (a damaged
// or truncated file, bytes after a member that are no gzip member, a larger
// file) and the caller streams the file with zlib as before, which also
// words every error (truncated member, corrupt data at compressed byte N).
// Buffers are kept per thread and reused from shard to shard (up to
// kWholeGzipKeptBytes each). Not thread-safe per source.
#pragma once

#include <cstdint>
#include <memory>
#include <string>

#include "common/base/status.h"
#include "common/input/byte_source.h"

namespace fanfold {

// Largest gzip file read whole (larger ones stream through zlib).
inline constexpr uint64_t kWholeGzipMaxFileBytes = uint64_t{64} << 20;
// Largest decompressed size read whole, as the file's trailer states it
// (with the file, at most 320 MiB of buffers per worker while it reads).
inline constexpr uint64_t kWholeGzipMaxOutputBytes = uint64_t{256} << 20;
// Buffers up to this size are kept for the next shard; larger ones are
// freed after their shard, so one big file does not pin its memory.
inline constexpr uint64_t kWholeGzipKeptBytes = uint64_t{32} << 20;

// Reads the gzip file `path`, open as fd at offset 0 and file_size bytes
// long, whole. Returns the source of its decompressed bytes, or nullptr when
// it declines (see above), or IoError when the file cannot be read. Reads
// with pread: fd's offset stays where it was.
Result<std::unique_ptr<ByteSource>> OpenWholeGzip(const std::string& path, int fd, uint64_t file_size);

}  // namespace fanfold
