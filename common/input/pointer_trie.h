// PointerTrie: the JSON Pointers (RFC 6901) of a FieldTable's raw fields as
// a trie of reference tokens, so an NDJSON line is walked once, only where a
// pointer leads. Built once per reader; the nodes' `seen` marks are the
// walking reader's own (one trie per reader, one reader per thread).
#pragma once

#include <cstdint>
#include <cstring>
#include <string>
#include <string_view>
#include <vector>

#include "common/base/status.h"
#include "common/input/field_table.h"

namespace fanfold {

// One reference token of a pointer path; the root has an empty token.
struct PointerNode {
  std::string token;
  int64_t index = -1;  // the array index the token denotes, or -1
  int slot = -1;       // slot to fill with the value here, or -1
  std::vector<uint32_t> children;
  int64_t max_child_index = -1;  // largest array index among children
  // Bit min(L, 63) set iff a child's token is L bytes long: most keys of a
  // record are ruled out by their length alone.
  uint64_t child_lengths = 0;
  uint64_t seen = 0;  // record generation that last consumed this node
  // The token's first 8 bytes, zero-filled (TokenPrefix): a key of up to
  // 8 bytes matches iff its length and prefix do.
  uint64_t prefix = 0;
  // Its last 8 bytes (TokenSuffix), for tokens of 9 to 16 bytes: such a key
  // matches iff its length, prefix and suffix do.
  uint64_t suffix = 0;
  // The children by ChildHash of a key's prefix and length: each entry a
  // child or -1, no two children in one entry. Empty when no multiplier
  // separates them (children sharing length and prefix): then the walk
  // scans `children`.
  std::vector<int32_t> child_table;
  uint64_t table_multiplier = 0;
  int table_shift = 64;
};

// The entry of child_table a key of `length` bytes and prefix `prefix`
// falls in.
inline size_t ChildHash(const PointerNode& parent, uint64_t prefix, size_t length) {
  return static_cast<size_t>(((prefix + length * 0x9E3779B97F4A7C15ULL) * parent.table_multiplier) >>
                             parent.table_shift);
}

// The first min(n, 8) bytes of s as a little-endian word, the rest zero.
// Reads 8 bytes from s: the caller guarantees they are readable.
inline uint64_t TokenPrefix(const char* s, size_t n) {
  uint64_t w;
  std::memcpy(&w, s, 8);
  return n >= 8 ? w : w & ((uint64_t{1} << (8 * n)) - 1);
}

// The last 8 bytes of s. REQUIRES: n >= 8.
inline uint64_t TokenSuffix(const char* s, size_t n) {
  uint64_t w;
  std::memcpy(&w, s + n - 8, 8);
  return w;
}

// The bit of child_lengths for a key of n bytes.
inline uint64_t TokenLengthBit(size_t n) { return uint64_t{1} << (n < 63 ? n : 63); }

// Keys are short, so comparing the first byte before memcmp skips most calls.
inline bool TokenIs(const std::string& token, std::string_view key) {
  return token.size() == key.size() &&
         (key.empty() || (token[0] == key[0] && std::memcmp(token.data(), key.data(), key.size()) == 0));
}

// Returns the trie of fields' raw slots (element 0 is the root), or
// InvalidArgument iff a raw field is not a JSON Pointer or is "" (the whole
// document, not supported).
Result<std::vector<PointerNode>> BuildPointerTrie(const FieldTable& fields);

}  // namespace fanfold
