// Shard parts: how `run --part I/N` cuts a job's sorted shard list into N
// contiguous parts of about equal bytes, and the digest of the full list
// that each part's run.json records so `merge` can check the parts were cut
// from the same list. Depends only on the shard list (paths, identities,
// sizes), never on the machine or worker count. Pure functions.
//
// The assignment: shard i weighs w_i = its bytes + 1 (so empty files count
// too); with W the total weight and C_i the weight of the shards before it,
// shard i goes to part floor(N * (2*C_i + w_i) / (2*W)) + 1, i.e. the part
// in which its midpoint falls when the cumulative bytes are cut into N equal
// ranges. The parts are contiguous, in shard order, and may be empty (more
// parts than shards, or one shard larger than a part's share).
#pragma once

#include <cstdint>
#include <string>

#include "common/base/status.h"
#include "common/job/shard_list.h"

namespace fanfold {

struct PartNumber {
  uint32_t number = 0;  // I, 1-based
  uint32_t count = 0;   // N
};

inline constexpr uint32_t kMaxParts = 100000;

// Parses "I/N" (decimal, 1 <= I <= N <= kMaxParts); the error names flag.
Result<PartNumber> ParsePartNumber(const std::string& text, const char* flag);

// The full list's indices [*first, *end) of part p.
void PartRange(const ShardList& list, PartNumber p, uint32_t* first, uint32_t* end);

// XXH3-64 (16 hex digits) over every shard's identity in order: path, file
// size, mtime, byte range, compression.
std::string ShardListDigest(const ShardList& list);

}  // namespace fanfold
