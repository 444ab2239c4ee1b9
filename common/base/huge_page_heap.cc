#include "common/base/huge_page_heap.h"

#include <algorithm>
#include <cstdlib>
#include <fstream>
#include <limits>
#include <mutex>
#include <string>
#include <vector>

#if defined(__linux__) && defined(__GLIBC__)
#include <malloc.h>
#include <sys/mman.h>
#include <unistd.h>
#define FANFOLD_HUGE_HEAP_POSSIBLE 1
#endif
#if defined(__SANITIZE_ADDRESS__) || defined(__SANITIZE_THREAD__)
#undef FANFOLD_HUGE_HEAP_POSSIBLE
#endif
#if defined(__has_feature)
#if __has_feature(address_sanitizer) || __has_feature(thread_sanitizer) || __has_feature(memory_sanitizer)
#undef FANFOLD_HUGE_HEAP_POSSIBLE
#endif
#endif

namespace fanfold {

#ifdef FANFOLD_HUGE_HEAP_POSSIBLE
namespace {

constexpr uintptr_t kHugePage = uintptr_t{2} << 20;
// glibc's thread heaps: HEAP_MAX_SIZE, 2 * DEFAULT_MMAP_THRESHOLD_MAX on
// 64-bit builds (malloc/arena.c), each aligned on its size.
constexpr uintptr_t kThreadHeapBytes = uintptr_t{64} << 20;
// glibc's largest dynamic mmap threshold (DEFAULT_MMAP_THRESHOLD_MAX on
// 64-bit builds, malloc/malloc.c).
constexpr int kMmapThreshold = 32 << 20;
// glibc's defaults of M_TOP_PAD, M_TRIM_THRESHOLD and M_MMAP_THRESHOLD
// (DEFAULT_TOP_PAD, DEFAULT_TRIM_THRESHOLD, DEFAULT_MMAP_THRESHOLD_MIN,
// malloc/malloc.c).
constexpr int kDefaultTopPad = 128 << 10;
constexpr int kDefaultTrimThreshold = 128 << 10;
constexpr int kDefaultMmapThreshold = 128 << 10;

bool MadviseMode() {
  std::ifstream in("/sys/kernel/mm/transparent_hugepage/enabled");
  std::string line;
  return std::getline(in, line) && line.find("[madvise]") != std::string::npos;
}

struct State {
  std::once_flag once;
  uint64_t advised = 0;
  uintptr_t main_hi = 0;  // the advised span's end: the main heap lies below it
  std::mutex mu;
  std::vector<uintptr_t> thread_heaps;  // advised already
};
State& TheState() {
  static State s;
  return s;
}
// The program's own data: the main heap starts above it.
char g_marker;

uint64_t ReserveAndAdvise() {
  if (!MadviseMode()) return 0;
  const uintptr_t before = reinterpret_cast<uintptr_t>(sbrk(0));
  if (before == static_cast<uintptr_t>(-1)) return 0;
  // Grow the heap once by the whole span: with a top pad that large, the
  // first allocation the free space cannot hold moves the break by it.
  // Setting any of these fixes malloc's mmap threshold, which would climb
  // from 128 KiB as big blocks are freed: it is fixed where it would end,
  // so big buffers made again and again (a partial's bytes) come from the
  // heap, already backed, not from fresh mappings each time.
  // Whatever fails below puts malloc's defaults back (the threshold then
  // stays at its starting 128 KiB instead of climbing), and with trimming
  // on again an unused span goes back to the system at the next free.
  auto give_up = [] {
    (void)mallopt(M_TOP_PAD, kDefaultTopPad);
    (void)mallopt(M_TRIM_THRESHOLD, kDefaultTrimThreshold);
    (void)mallopt(M_MMAP_THRESHOLD, kDefaultMmapThreshold);
    return uint64_t{0};
  };
  if (mallopt(M_MMAP_THRESHOLD, kMmapThreshold) == 0 ||
      mallopt(M_TRIM_THRESHOLD, std::numeric_limits<int>::max()) == 0 ||  // above the span: never trimmed off
      mallopt(M_TOP_PAD, static_cast<int>(kHugePageHeapReserveBytes)) == 0)
    return give_up();
  std::vector<void*> held;
  for (int i = 0; i < 256 && reinterpret_cast<uintptr_t>(sbrk(0)) == before; ++i) {
    void* p = std::malloc(size_t{64} << 10);
    if (p == nullptr) break;
    held.push_back(p);
  }
  for (void* p : held) std::free(p);
  (void)mallopt(M_TOP_PAD, kDefaultTopPad);
  const uintptr_t after = reinterpret_cast<uintptr_t>(sbrk(0));
  if (after == static_cast<uintptr_t>(-1) || after <= before) return give_up();  // the break did not move
  const uintptr_t lo = (before + kHugePage - 1) & ~(kHugePage - 1);
  const uintptr_t hi = after & ~(kHugePage - 1);
  if (hi <= lo || madvise(reinterpret_cast<void*>(lo), hi - lo, MADV_HUGEPAGE) != 0) return give_up();
  TheState().main_hi = after;
  return hi - lo;
}

}  // namespace

uint64_t PreferHugePagesForHeap() {
  State& s = TheState();
  std::call_once(s.once, [&s] { s.advised = ReserveAndAdvise(); });
  return s.advised;
}

void PreferHugePagesForThreadHeap() {
  State& s = TheState();
  if (PreferHugePagesForHeap() == 0) return;
  // A small block (from wherever the thread's heaps have room) and a larger
  // one (most often cut from the newest heap's free end): when a thread's
  // arena has grown a second heap, the next call finds it. The first
  // allocation of a new thread makes its arena: with the top pad at a whole
  // thread heap, that arena's first heap is opened (mapped writable) whole
  // when it is made, not a few pages at a time as it fills, so 2 MiB pages
  // can back it from its first writes (address space only). The pad is a
  // parameter shared by all threads; one that grows a heap meanwhile just
  // grows it by more.
  (void)mallopt(M_TOP_PAD, static_cast<int>(kThreadHeapBytes));
  void* first = std::malloc(64);
  (void)mallopt(M_TOP_PAD, kDefaultTopPad);
  std::free(first);
  for (const size_t size : {size_t{64}, size_t{96} << 10}) {
    void* probe = std::malloc(size);
    if (probe == nullptr) return;
    const uintptr_t p = reinterpret_cast<uintptr_t>(probe);
    std::free(probe);
    if (p > reinterpret_cast<uintptr_t>(&g_marker) && p < s.main_hi) continue;  // the main heap: advised
    const uintptr_t heap = p & ~(kThreadHeapBytes - 1);
    std::lock_guard<std::mutex> lock(s.mu);
    if (std::find(s.thread_heaps.begin(), s.thread_heaps.end(), heap) != s.thread_heaps.end() ||
        s.thread_heaps.size() >= 256)
      continue;
    // Unmapped parts of the range (if any) only make madvise report ENOMEM;
    // the mapped ones are advised either way.
    (void)madvise(reinterpret_cast<void*>(heap), kThreadHeapBytes, MADV_HUGEPAGE);
    s.thread_heaps.push_back(heap);
  }
}

#else

uint64_t PreferHugePagesForHeap() { return 0; }
void PreferHugePagesForThreadHeap() {}

#endif

}  // namespace fanfold
