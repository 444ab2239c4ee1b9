#include "common/input/pointer_trie.h"

#include <algorithm>
#include <cstring>

#include "common/input/json_pointer.h"

namespace fanfold {

namespace {

// Fills parent->child_table: at least four entries a child (at least 16),
// with the first of a fixed list of odd multipliers that puts no two
// children in one entry; none if none does (the walk then scans).
void BuildChildTable(const std::vector<PointerNode>& nodes, PointerNode* parent) {
  const size_t n = parent->children.size();
  if (n == 0) return;
  int bits = 4;
  while ((size_t{1} << bits) < 4 * n) ++bits;
  parent->table_shift = 64 - bits;
  uint64_t seed = 0x2545F4914F6CDD1DULL;
  for (int attempt = 0; attempt < 64; ++attempt) {
    // splitmix64 (Steele, Lea and Flood, OOPSLA 2014) for the candidates.
    seed += 0x9E3779B97F4A7C15ULL;
    uint64_t z = seed;
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
    parent->table_multiplier = (z ^ (z >> 31)) | 1;
    parent->child_table.assign(size_t{1} << bits, -1);
    bool separated = true;
    for (uint32_t c : parent->children) {
      const PointerNode& child = nodes[c];
      int32_t& entry = parent->child_table[ChildHash(*parent, child.prefix, child.token.size())];
      if (entry >= 0) {
        separated = false;
        break;
      }
      entry = static_cast<int32_t>(c);
    }
    if (separated) return;
  }
  parent->child_table.clear();
}

}  // namespace

Result<std::vector<PointerNode>> BuildPointerTrie(const FieldTable& fields) {
  std::vector<PointerNode> nodes(1);
  for (size_t s = 0; s < fields.size(); ++s) {
    const FieldTable::Slot& slot = fields.slot(s);
    if (slot.derived) continue;
    if (slot.name.empty()) {
      return Status::InvalidArgument(
          "the JSON Pointer \"\" (the whole record) cannot be used as a field; name a member such as '/id'");
    }
    if (slot.name[0] != '/') {
      return Status::InvalidArgument("NDJSON fields are JSON Pointers and start with '/': got '" + slot.name + "'");
    }
    Result<std::vector<std::string>> tokens = ParseJsonPointer(slot.name);
    if (!tokens.ok()) return tokens.status();
    uint32_t at = 0;
    for (const std::string& token : *tokens) {
      uint32_t next = 0;
      for (uint32_t c : nodes[at].children) {
        if (nodes[c].token == token) next = c;
      }
      if (next == 0) {
        next = static_cast<uint32_t>(nodes.size());
        PointerNode node;
        node.token = token;
        node.index = JsonPointerIndex(token);
        char first8[8] = {};
        std::memcpy(first8, token.data(), std::min<size_t>(token.size(), 8));
        node.prefix = TokenPrefix(first8, token.size());
        if (token.size() >= 8) node.suffix = TokenSuffix(token.data(), token.size());
        nodes.push_back(std::move(node));
        PointerNode& parent = nodes[at];
        parent.children.push_back(next);
        parent.max_child_index = std::max(parent.max_child_index, nodes[next].index);
        parent.child_lengths |= TokenLengthBit(token.size());
      }
      at = next;
    }
    nodes[at].slot = static_cast<int>(s);
  }
  for (PointerNode& node : nodes) BuildChildTable(nodes, &node);
  return nodes;
}

}  // namespace fanfold
