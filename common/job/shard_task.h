// ShardTask: what the coordinator tells a worker to process — one shard of
// the run's sorted shard list. Plain data, copied into the worker's channel
// by the transport (see common/transport/transport.h).
#pragma once

#include <cstdint>
#include <string>

#include "common/input/byte_source.h"

namespace fanfold {

struct ShardTask {
  uint32_t index = 0;              // position in the run's sorted shard list
  std::string path;                // absolute path of the shard's file
  uint64_t offset = 0;             // byte range start (0 for whole files)
  uint64_t length = UINT64_MAX;    // byte range length; UINT64_MAX = to the end
  Compression compression = Compression::kNone;
  uint32_t attempt = 1;            // 1 for the first try, 2.. for retries
  // The file's identity when the coordinator listed it (0/0 = not given):
  // a transport that reads the file elsewhere (MPI) checks it first.
  uint64_t file_size = 0;
  int64_t mtime_ns = 0;
  // The worker's group tables' budget in bytes, shared by the job's
  // reductions (0 = the worker's default). Results never depend on it.
  uint64_t table_bytes = 0;
};

}  // namespace fanfold
