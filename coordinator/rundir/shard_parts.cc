#include "coordinator/rundir/shard_parts.h"

#include <cstdio>

#include <xxhash.h>

namespace fanfold {

namespace {

// A decimal whole number of 1 to 9 digits, else -1.
int64_t ParseDecimal(const std::string& s) {
  if (s.empty() || s.size() > 9) return -1;
  int64_t v = 0;
  for (char c : s) {
    if (c < '0' || c > '9') return -1;
    v = v * 10 + (c - '0');
  }
  return v;
}

}  // namespace

Result<PartNumber> ParsePartNumber(const std::string& text, const char* flag) {
  const std::string head = std::string(flag) + " '" + text + "': ";
  const size_t slash = text.find('/');
  const int64_t i = slash == std::string::npos ? -1 : ParseDecimal(text.substr(0, slash));
  const int64_t n = slash == std::string::npos ? -1 : ParseDecimal(text.substr(slash + 1));
  if (i < 0 || n < 0)
    return Status::InvalidArgument(head + "expected I/N, part I of N parts, two whole numbers (parts are "
                                          "numbered from 1), e.g. " + flag + " 2/8");
  if (n < 1 || n > kMaxParts)
    return Status::InvalidArgument(head + "the number of parts N must be 1 to " + std::to_string(kMaxParts));
  if (i < 1 || i > n)
    return Status::InvalidArgument(head + "the part I must be 1 to " + std::to_string(n) +
                                   " (parts are numbered from 1: the first of " + std::to_string(n) +
                                   " is 1/" + std::to_string(n) + ", the last " + std::to_string(n) + "/" +
                                   std::to_string(n) + ")");
  return PartNumber{static_cast<uint32_t>(i), static_cast<uint32_t>(n)};
}

void PartRange(const ShardList& list, PartNumber p, uint32_t* first, uint32_t* end) {
  using u128 = unsigned __int128;
  u128 total = 0;
  for (const Shard& s : list.shards) total += u128{s.bytes()} + 1;
  *first = *end = 0;
  bool started = false;
  u128 before = 0;
  for (uint32_t i = 0; i < list.shards.size(); ++i) {
    const u128 w = u128{list.shards[i].bytes()} + 1;
    u128 part = (u128{p.count} * (2 * before + w)) / (2 * total);
    if (part >= p.count) part = p.count - 1;
    before += w;
    if (part + 1 < p.number) continue;
    if (part + 1 > p.number) {
      if (!started) *first = *end = i;
      return;
    }
    if (!started) *first = i;
    started = true;
    *end = i + 1;
  }
  if (!started) *first = *end = static_cast<uint32_t>(list.shards.size());
}

std::string ShardListDigest(const ShardList& list) {
  XXH3_state_t* st = XXH3_createState();
  XXH3_64bits_reset(st);
  auto u64 = [st](uint64_t v) {
    unsigned char b[8];
    for (int k = 0; k < 8; ++k) b[k] = static_cast<unsigned char>(v >> (8 * k));
    XXH3_64bits_update(st, b, 8);
  };
  u64(list.shards.size());
  for (const Shard& s : list.shards) {
    u64(s.path.size());
    XXH3_64bits_update(st, s.path.data(), s.path.size());
    u64(s.file_size);
    u64(static_cast<uint64_t>(s.mtime_ns));
    u64(s.offset);
    u64(s.length);
    u64(static_cast<uint64_t>(s.compression));
  }
  const uint64_t h = XXH3_64bits_digest(st);
  XXH3_freeState(st);
  char hex[17];
  std::snprintf(hex, sizeof hex, "%016llx", static_cast<unsigned long long>(h));
  return hex;
}

}  // namespace fanfold
