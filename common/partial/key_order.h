// KeyOrder: the order in which a group table encodes its groups — by key
// bytes, ascending (unsigned, a shorter key before every longer one it
// prefixes). Keys are compared 8 bytes at a time as big-endian integers,
// and only keys equal so far go on to their next 8 bytes: keys of one
// shard often share a long prefix (a tag, a length, "2026-03-01T"), which a
// byte-wise compare would read again at every comparison. Pure function;
// thread-safe.
#pragma once

#include <cstdint>
#include <string_view>
#include <vector>

namespace fanfold {

// The indexes of keys, sorted by the key each names. REQUIRES: keys are
// distinct (equal keys would come out in an unspecified order).
std::vector<uint32_t> KeyOrder(const std::vector<std::string_view>& keys);

}  // namespace fanfold
