// ShardList: expands a job's input patterns into the run's shards — sorted by
// absolute path, de-duplicated, each with its identity (size, mtime) and
// compression, and large uncompressed files cut into fixed-size chunks
// (cut points depend only on the file and chunk_bytes, never on -j). The
// shard index is the position in this list. Built once by the coordinator;
// read-only afterwards.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "common/input/byte_source.h"
#include "common/job/job_spec.h"
#include "common/input/record_reader.h"
#include "common/base/status.h"

namespace fanfold {

struct Shard {
  uint32_t index = 0;
  std::string path;        // absolute
  uint64_t file_size = 0;  // size of the whole file
  int64_t mtime_ns = 0;    // modification time of the file, ns since the epoch
  uint64_t offset = 0;     // chunk start (0 for whole files)
  uint64_t length = UINT64_MAX;  // chunk length; UINT64_MAX = whole file
  Compression compression = Compression::kNone;
  // Bytes this shard reads from disk (for scheduling and progress).
  uint64_t bytes() const { return length == UINT64_MAX ? file_size : length; }
};

struct ShardList {
  RecordFormat format = RecordFormat::kNdjson;
  std::vector<Shard> shards;
};

// Expands job.files relative to job.base_dir. Fails, before any work, on a
// pattern that matches nothing, a missing or unreadable file, or files whose
// formats differ; messages name the /inputs/files/N entry.
Result<ShardList> ExpandShards(const JobSpec& job);

// Format implied by a file name (an extension of a RecordFormatRow, before
// any ".zst"/".gz"); returns false iff the name says nothing.
bool FormatFromName(const std::string& path, RecordFormat* out);

// Returns true iff `name` matches glob `pattern` (one path segment: '*', '?',
// '[...]' with '!' or '^' negation). Exposed for tests.
bool GlobMatch(const std::string& pattern, const std::string& name);

}  // namespace fanfold
