// StoredPartialMismatch: whether a committed partial may stand for a shard
// of the current shard list. A partial is tied to its shard by the plan
// fingerprint and the shard's identity (path hash, file size, mtime, byte
// range) in its header — not by the shard index in its header, which is
// where the shard sat in the list when the partial was computed: `refresh`
// re-sorts the list (files added or gone), so a reused partial's header may
// name another index. Pure function; thread-safe.
#pragma once

#include <cstdint>
#include <string>

#include "common/job/shard_list.h"
#include "common/partial/partial_codec.h"

namespace fanfold {

// Why the partial whose header is h cannot be reused for shard s of the plan
// with this fingerprint ("" iff it can).
std::string StoredPartialMismatch(const PartialHeader& h, const Shard& s, uint64_t fingerprint);

}  // namespace fanfold
