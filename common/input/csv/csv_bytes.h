// CSV/TSV byte scanning shared by the reader's two cuts (csv_reader.cc: the
// general cut; csv_fast_cut.cc: the fast one): which of 64 bytes are the
// separator, '\n' or '"' (SSE2, or AVX2 where the CPU has it: the caller
// checks at run time; the build sets no -march), the end of an unquoted
// field eight bytes at a time, and a cell's value before its text is set.
// Internal to common/input/csv/. Header-only, stateless, thread-safe.
#pragma once

#include <bit>
#include <cstddef>
#include <cstdint>

#include "common/base/value.h"

#if defined(__SSE2__)
#include <emmintrin.h>
#endif
#if defined(__x86_64__) && defined(__GNUC__)
#include <immintrin.h>
#endif

namespace fanfold {
namespace csv_bytes {

static_assert(std::endian::native == std::endian::little, "ScanUnquoted takes the lowest byte as the first");

// Bytes readable after the data: ScanUnquoted loads 8 bytes at a time,
// MasksAt 64.
constexpr size_t kScanPadding = 64;

// Which of the 64 bytes at q are `sep`, '\n' and '"' (bit i: byte q[i]).
struct ByteMasks {
  uint64_t sep, newline, quote;
};

inline ByteMasks MasksAt(const char* q, char sep) {
#if defined(__SSE2__)
  const __m128i seps = _mm_set1_epi8(sep);
  const __m128i newlines = _mm_set1_epi8('\n');
  const __m128i quotes = _mm_set1_epi8('"');
  ByteMasks m{0, 0, 0};
  for (int i = 0; i < 4; ++i) {
    const __m128i v = _mm_loadu_si128(reinterpret_cast<const __m128i*>(q + 16 * i));
    m.sep |= static_cast<uint64_t>(static_cast<uint32_t>(_mm_movemask_epi8(_mm_cmpeq_epi8(v, seps)))) << (16 * i);
    m.newline |= static_cast<uint64_t>(static_cast<uint32_t>(_mm_movemask_epi8(_mm_cmpeq_epi8(v, newlines))))
                 << (16 * i);
    m.quote |= static_cast<uint64_t>(static_cast<uint32_t>(_mm_movemask_epi8(_mm_cmpeq_epi8(v, quotes)))) << (16 * i);
  }
  return m;
#else
  ByteMasks m{0, 0, 0};
  for (uint32_t i = 0; i < 64; ++i) {
    m.sep |= static_cast<uint64_t>(q[i] == sep) << i;
    m.newline |= static_cast<uint64_t>(q[i] == '\n') << i;
    m.quote |= static_cast<uint64_t>(q[i] == '"') << i;
  }
  return m;
#endif
}

#if defined(__x86_64__) && defined(__GNUC__)
#define FANFOLD_CSV_AVX2 1
// MasksAt with two 32-byte AVX2 loads. Only on a CPU that has AVX2 (the
// build sets no -march: the caller checks at run time).
__attribute__((target("avx2"))) inline ByteMasks MasksAtAvx2(const char* q, char sep) {
  const __m256i seps = _mm256_set1_epi8(sep);
  const __m256i newlines = _mm256_set1_epi8('\n');
  const __m256i quotes = _mm256_set1_epi8('"');
  const __m256i lo = _mm256_loadu_si256(reinterpret_cast<const __m256i*>(q));
  const __m256i hi = _mm256_loadu_si256(reinterpret_cast<const __m256i*>(q + 32));
  auto mask = [&](__m256i c) __attribute__((target("avx2"))) {
    return static_cast<uint64_t>(static_cast<uint32_t>(_mm256_movemask_epi8(_mm256_cmpeq_epi8(lo, c)))) |
           static_cast<uint64_t>(static_cast<uint32_t>(_mm256_movemask_epi8(_mm256_cmpeq_epi8(hi, c)))) << 32;
  };
  return ByteMasks{mask(seps), mask(newlines), mask(quotes)};
}
#endif

// The masks of the 64 bytes at q, by AVX2 or SSE2.
template <bool kAvx2>
inline __attribute__((always_inline)) ByteMasks Masks(const char* q, char sep) {
#if defined(FANFOLD_CSV_AVX2)
  if constexpr (kAvx2) return MasksAtAvx2(q, sep);
#endif
  return MasksAt(q, sep);
}

// Scans an unquoted field: the first separator or '\n' at or after q, or
// end. Eight bytes per step (SWAR zero-byte test on x ^ broadcast(c)): its
// lowest flagged byte is always a true match, later ones may be false, so
// only the lowest is used. REQUIRES: kScanPadding readable bytes after end.
inline const char* ScanUnquoted(const char* q, const char* end, char sep) {
  constexpr uint64_t kOnes = 0x0101010101010101ULL;
  constexpr uint64_t kHigh = 0x8080808080808080ULL;
  const uint64_t seps = kOnes * static_cast<uint8_t>(sep);
  const uint64_t newlines = kOnes * static_cast<uint8_t>('\n');
  for (; q < end; q += 8) {
    uint64_t w;
    std::memcpy(&w, q, 8);
    const uint64_t a = w ^ seps;
    const uint64_t b = w ^ newlines;
    const uint64_t hits = (((a - kOnes) & ~a) | ((b - kOnes) & ~b)) & kHigh;
    if (hits != 0) {
      const char* hit = q + (std::countr_zero(hits) >> 3);
      return hit < end ? hit : end;
    }
  }
  return end;
}

// A cell's value before its text is set: a string with nothing read from
// its text yet; and an empty cell's, Missing.
constexpr Value StringCell() {
  Value v;
  v.kind = ValueKind::kString;
  return v;
}
constexpr Value kStringCell = StringCell();
constexpr Value kMissingCell{};

}  // namespace csv_bytes
}  // namespace fanfold
