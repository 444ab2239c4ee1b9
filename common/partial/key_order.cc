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
  uint64_t w;
  if (offset + 8 <= key.size()) {
    std::memcpy(&w, key.data() + offset, 8);
  } else if (key.size() <= offset) {
    return 0;
  } else if (key.size() >= 8) {
    // The key's last 8 bytes, the ones before offset shifted out (the
    // shift is below 64: the key goes past offset).
    std::memcpy(&w, key.data() + key.size() - 8, 8);
    if constexpr (std::endian::native == std::endian::little) w = __builtin_bswap64(w);
    return w << (8 * (offset + 8 - key.size()));
  } else {
    unsigned char bytes[8] = {};
    std::memcpy(bytes, key.data() + offset, key.size() - offset);
    std::memcpy(&w, bytes, 8);
  }
  if constexpr (std::endian::native == std::endian::little) w = __builtin_bswap64(w);
  return w;
}

// How many leading bytes a and b share, at most n (n <= both sizes).
size_t SharedBytes(const char* a, const char* b, size_t n) {
  auto first_difference = [](uint64_t x, uint64_t y) { return static_cast<size_t>(std::countr_zero(x ^ y)) / 8; };
  uint64_t x, y;
  size_t i = 0;
  for (; i + 8 <= n; i += 8) {
    std::memcpy(&x, a + i, 8);
    std::memcpy(&y, b + i, 8);
    if (x != y) return i + first_difference(x, y);
  }
  if (i == n) return n;
  if (n >= 8) {  // the last 8 bytes, those before i known equal
    std::memcpy(&x, a + n - 8, 8);
    std::memcpy(&y, b + n - 8, 8);
    return x == y ? n : n - 8 + first_difference(x, y);
  }
  while (i < n && a[i] == b[i]) ++i;
  return i;
}

// How many leading bytes every key shares (0 for no keys).
size_t SharedPrefix(const std::vector<std::string_view>& keys) {
  static_assert(std::endian::native == std::endian::little, "the first differing byte is the lowest");
  if (keys.empty()) return 0;
  const std::string_view first = keys[0];
  size_t shared = first.size();
  for (const std::string_view k : keys) {
    shared = SharedBytes(first.data(), k.data(), std::min(shared, k.size()));
    if (shared == 0) break;
  }
  return shared;
}

// Below this many entries a range is sorted by comparisons, above by radix
// over bytes; from kWideRadixMin entries on, over 16-bit digits (half the
// passes; its 4 x 65,536 counters cost less than the passes they save only
// on ranges that large).
constexpr size_t kRadixMin = 2048;
constexpr size_t kWideRadixMin = size_t{1} << 16;

// Sorts [begin, end) by window, stably: least significant digit (of kBits
// bits) first, one counting pass for all digits, and no pass over a digit
// that every entry shares (keys of one table share tags, lengths and
// prefixes).
template <int kBits>
void RadixSortByWindow(SortEntry* begin, SortEntry* end) {
  constexpr int kDigits = 64 / kBits;
  constexpr size_t kRange = size_t{1} << kBits;
  constexpr uint64_t kMask = kRange - 1;
  const size_t n = static_cast<size_t>(end - begin);
  std::vector<uint32_t> counts(kDigits * kRange, 0);
  for (const SortEntry* e = begin; e != end; ++e)
    for (int d = 0; d < kDigits; ++d) ++counts[d * kRange + ((e->window >> (kBits * d)) & kMask)];
  std::vector<SortEntry> scratch(n);
  SortEntry* src = begin;
  SortEntry* dst = scratch.data();
  for (int d = 0; d < kDigits; ++d) {
    uint32_t* c = &counts[d * kRange];
    if (c[(src->window >> (kBits * d)) & kMask] == n) continue;  // one value: order unchanged
    uint32_t at = 0;
    for (size_t v = 0; v < kRange; ++v) {
      const uint32_t k = c[v];
      c[v] = at;
      at += k;
    }
    for (const SortEntry* e = src; e != src + n; ++e) dst[c[(e->window >> (kBits * d)) & kMask]++] = *e;
    std::swap(src, dst);
  }
  if (src != begin) std::copy(src, src + n, begin);
}

// Sorts [begin, end), whose keys agree on their first `offset` bytes.
void SortRange(const std::vector<std::string_view>& keys, SortEntry* begin, SortEntry* end, size_t offset) {
  for (SortEntry* e = begin; e != end; ++e) e->window = KeyWindow(keys[e->group], offset);
  if (static_cast<size_t>(end - begin) >= kWideRadixMin)
    RadixSortByWindow<16>(begin, end);
  else if (static_cast<size_t>(end - begin) >= kRadixMin)
    RadixSortByWindow<8>(begin, end);
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
  // Keys of one table often share their first bytes (a tag and a length, a
  // fixed prefix of an identifier): the sort starts past them.
  if (!order.empty()) SortRange(keys, order.data(), order.data() + order.size(), SharedPrefix(keys));
  std::vector<uint32_t> ids(order.size());
  for (size_t i = 0; i < order.size(); ++i) ids[i] = order[i].group;
  return ids;
}

}  // namespace fanfold
