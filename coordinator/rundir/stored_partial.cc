#include "coordinator/rundir/stored_partial.h"

namespace fanfold {

std::string StoredPartialMismatch(const PartialHeader& h, const Shard& s, uint64_t fingerprint) {
  if (h.fingerprint != fingerprint) return "it was computed by a different plan";
  if (h.path_hash != PathHash(s.path) || h.offset != s.offset || h.length != s.length)
    return "it belongs to another shard";
  if (h.file_size != s.file_size || h.mtime_ns != s.mtime_ns) return "the shard's file changed after it was computed";
  return "";
}

}  // namespace fanfold
