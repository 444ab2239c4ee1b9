#include "common/input/pointer_trie.h"

#include <algorithm>
#include <cstring>

#include "common/input/json_pointer.h"

namespace fanfold {

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
  return nodes;
}

}  // namespace fanfold
