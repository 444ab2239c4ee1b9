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
  uint64_t seen = 0;  // record generation that last consumed this node
};

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
