#include "common/partial/key_order.h"

#include <algorithm>
#include <array>
#include <bit>
#include <cstring>

namespace fanfold {
namespace {

using SortEntry = KeyOrderStretches::Entry;

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

// Sorts [begin, end), whose keys agree on their first `offset` bytes and
// whose windows at offset are set.
void SortByWindows(const std::vector<std::string_view>& keys, SortEntry* begin, SortEntry* end, size_t offset);

// Sorts [begin, end), whose keys agree on their first `offset` bytes.
void SortRange(const std::vector<std::string_view>& keys, SortEntry* begin, SortEntry* end, size_t offset) {
  for (SortEntry* e = begin; e != end; ++e) e->window = KeyWindow(keys[e->group], offset);
  SortByWindows(keys, begin, end, offset);
}

void SortByWindows(const std::vector<std::string_view>& keys, SortEntry* begin, SortEntry* end, size_t offset) {
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

// Tables from this many keys on are dealt into buckets by the top 16 bits
// of their first window and sorted a stretch of about kStretchKeys at a time.
constexpr size_t kStretchMinKeys = size_t{1} << 15;
constexpr size_t kStretchKeys = size_t{1} << 13;

}  // namespace

KeyOrderStretches::KeyOrderStretches(const std::vector<std::string_view>& keys)
    : keys_(keys) {
  const size_t n = keys.size();
  if (n == 0) return;
  // Keys of one table often share their first bytes (a tag and a length, a
  // fixed prefix of an identifier): the sort starts past them.
  offset_ = SharedPrefix(keys);
  std::vector<SortEntry> entries(n);
  for (uint32_t g = 0; g < n; ++g) entries[g] = SortEntry{KeyWindow(keys[g], offset_), g};
  if (n < kStretchMinKeys) {  // one stretch (no bucket_ends_: Next sorts all)
    entries_ = std::move(entries);
    ids_.resize(n);
    return;
  }
  // Dealt by the window's top 16 bits, stably (a counting pass, a scatter).
  constexpr size_t kBuckets = size_t{1} << 16;
  std::vector<uint32_t> at(kBuckets + 1, 0);
  for (const SortEntry& e : entries) ++at[(e.window >> 48) + 1];
  for (size_t b = 0; b < kBuckets; ++b) at[b + 1] += at[b];
  bucket_ends_.reserve(kBuckets);
  for (size_t b = 0; b < kBuckets; ++b)
    if (at[b + 1] != at[b]) bucket_ends_.push_back(at[b + 1]);
  entries_.resize(n);
  for (const SortEntry& e : entries) entries_[at[e.window >> 48]++] = e;
  std::vector<SortEntry>().swap(entries);
  ids_.resize(n);  // after the deal: its two arrays and the ids are not all held at once
}

bool KeyOrderStretches::Next() {
  if (bucket_ends_.empty()) {  // a small table, in one stretch
    if (sorted_ == entries_.size()) return false;
    SortByWindows(keys_, entries_.data(), entries_.data() + entries_.size(), offset_);
    for (size_t i = 0; i < entries_.size(); ++i) ids_[i] = entries_[i].group;
    sorted_ = entries_.size();
    return true;
  }
  if (next_bucket_ == bucket_ends_.size()) return false;
  const size_t from = sorted_;
  size_t to = from;
  do {
    const size_t begin = to;
    to = bucket_ends_[next_bucket_++];
    // The keys of a bucket share the window's top 16 bits (which its radix
    // passes skip).
    SortByWindows(keys_, entries_.data() + begin, entries_.data() + to, offset_);
  } while (to - from < kStretchKeys && next_bucket_ < bucket_ends_.size());
  for (size_t i = from; i < to; ++i) ids_[i] = entries_[i].group;
  sorted_ = to;
  if (next_bucket_ == bucket_ends_.size()) std::vector<SortEntry>().swap(entries_);
  return true;
}

std::vector<uint32_t> KeyOrder(const std::vector<std::string_view>& keys) {
  KeyOrderStretches order(keys);
  while (order.Next()) {
  }
  return order.TakeIds();
}

}  // namespace fanfold
