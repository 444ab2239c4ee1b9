#include "common/partial/key_order.h"

#include <algorithm>
#include <array>
#include <bit>
#include <cstring>

namespace fanfold {
namespace {

struct SortEntry {
  uint64_t window = 0;  // 8 key bytes at the current offset, big-endian
  uint32_t group = 0;
};

// The 8 bytes of key at [offset, offset + 8) as a big-endian integer, zeros
// past the key's end.
uint64_t KeyWindow(std::string_view key, size_t offset) {
  if (offset + 8 <= key.size()) {
    uint64_t w;
    std::memcpy(&w, key.data() + offset, 8);
    if constexpr (std::endian::native == std::endian::little) w = __builtin_bswap64(w);
    return w;
  }
  uint64_t w = 0;
  for (size_t i = 0; i < 8; ++i)
    w = (w << 8) | (offset + i < key.size() ? static_cast<unsigned char>(key[offset + i]) : 0u);
  return w;
}

// Below this many entries a range is sorted by comparisons, above by radix.
constexpr size_t kRadixMin = 2048;

// Sorts [begin, end) by window, stably: least significant byte first, one
// counting pass for all eight bytes, and no pass over a byte that every
// entry shares (keys of one table share tags, lengths and prefixes).
void RadixSortByWindow(SortEntry* begin, SortEntry* end) {
  const size_t n = static_cast<size_t>(end - begin);
  std::vector<std::array<uint32_t, 256>> counts(8);
  for (auto& c : counts) c.fill(0);
  for (const SortEntry* e = begin; e != end; ++e)
    for (int b = 0; b < 8; ++b) ++counts[b][(e->window >> (8 * b)) & 0xFF];
  std::vector<SortEntry> scratch(n);
  SortEntry* src = begin;
  SortEntry* dst = scratch.data();
  for (int b = 0; b < 8; ++b) {
    std::array<uint32_t, 256>& c = counts[b];
    if (c[(src->window >> (8 * b)) & 0xFF] == n) continue;  // one value: order unchanged
    uint32_t at = 0;
    for (uint32_t& x : c) {
      const uint32_t k = x;
      x = at;
      at += k;
    }
    for (const SortEntry* e = src; e != src + n; ++e) dst[c[(e->window >> (8 * b)) & 0xFF]++] = *e;
    std::swap(src, dst);
  }
  if (src != begin) std::copy(src, src + n, begin);
}

// Sorts [begin, end), whose keys agree on their first `offset` bytes.
void SortRange(const std::vector<std::string_view>& keys, SortEntry* begin, SortEntry* end, size_t offset) {
  for (SortEntry* e = begin; e != end; ++e) e->window = KeyWindow(keys[e->group], offset);
  if (static_cast<size_t>(end - begin) >= kRadixMin)
    RadixSortByWindow(begin, end);
  else
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
