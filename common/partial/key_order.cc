#include "common/partial/key_order.h"

#include <algorithm>

namespace fanfold {
namespace {

struct SortEntry {
  uint64_t window = 0;  // 8 key bytes at the current offset, big-endian
  uint32_t group = 0;
};

// The 8 bytes of key at [offset, offset + 8) as a big-endian integer, zeros
// past the key's end.
uint64_t KeyWindow(std::string_view key, size_t offset) {
  uint64_t w = 0;
  for (size_t i = 0; i < 8; ++i)
    w = (w << 8) | (offset + i < key.size() ? static_cast<unsigned char>(key[offset + i]) : 0u);
  return w;
}

// Sorts [begin, end), whose keys agree on their first `offset` bytes.
void SortRange(const std::vector<std::string_view>& keys, SortEntry* begin, SortEntry* end, size_t offset) {
  for (SortEntry* e = begin; e != end; ++e) e->window = KeyWindow(keys[e->group], offset);
  std::sort(begin, end, [](const SortEntry& a, const SortEntry& b) { return a.window < b.window; });
  for (SortEntry* run = begin; run != end;) {
    SortEntry* next = run + 1;
    while (next != end && next->window == run->window) ++next;
    if (next - run > 1) {
      bool longer = false;  // does any key go on past this window?
      for (SortEntry* e = run; e != next && !longer; ++e) longer = keys[e->group].size() > offset + 8;
      if (longer)
        SortRange(keys, run, next, offset + 8);
      else  // equal up to their ends but for zero padding: the shorter first
        std::sort(run, next, [&keys](const SortEntry& a, const SortEntry& b) { return keys[a.group] < keys[b.group]; });
    }
    run = next;
  }
}

}  // namespace

std::vector<uint32_t> KeyOrder(const std::vector<std::string_view>& keys) {
  std::vector<SortEntry> order(keys.size());
  for (uint32_t g = 0; g < keys.size(); ++g) order[g].group = g;
  if (!order.empty()) SortRange(keys, order.data(), order.data() + order.size(), 0);
  std::vector<uint32_t> ids(order.size());
  for (size_t i = 0; i < order.size(); ++i) ids[i] = order[i].group;
  return ids;
}

}  // namespace fanfold
