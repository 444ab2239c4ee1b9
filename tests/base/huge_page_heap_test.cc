// PreferHugePagesForHeap: when it reports the heap advised, the kernel's own
// account agrees — the mapping near the end of the heap is marked eligible for
// transparent huge pages in /proc/self/smaps (proc(5), "THPeligible", Linux
// 5.0+) — and memory there still works as any other.
#include "common/base/huge_page_heap.h"

#include <doctest/doctest.h>

#include <unistd.h>

#include <cctype>
#include <cstdint>
#include <cstdlib>
#include <cstring>
#include <fstream>
#include <sstream>
#include <string>

namespace fanfold {
namespace {

// The "THPeligible:" value of the mapping of /proc/self/smaps holding
// address a; -1 if no mapping holds it or the field is missing.
int ThpEligibleAt(uintptr_t a) {
  std::ifstream in("/proc/self/smaps");
  std::string line;
  bool inside = false;
  while (std::getline(in, line)) {
    // A mapping's line starts "lo-hi " in lower-case hex; its fields' lines
    // start with a capitalised name.
    if (!line.empty() && (std::isdigit(static_cast<unsigned char>(line[0])) || (line[0] >= 'a' && line[0] <= 'f'))) {
      unsigned long lo = 0, hi = 0;
      char dash = 0;
      std::istringstream head(line);
      if (head >> std::hex >> lo >> dash >> hi && dash == '-') inside = a >= lo && a < hi;
      continue;
    }
    if (inside && line.rfind("THPeligible:", 0) == 0) return std::atoi(line.c_str() + 12);
  }
  return -1;
}

// Intent: the advice lands where the heap grows, and asking again changes
// nothing. Nothing to check where it does nothing (another THP mode, a
// sanitizer's allocator).
TEST_CASE("huge page heap: the heap's top is THP-eligible once advised") {
  const uint64_t advised = PreferHugePagesForHeap();
  CHECK(PreferHugePagesForHeap() == advised);
  PreferHugePagesForThreadHeap();  // from the main thread: its heap is the main one, already advised
  if (advised == 0) return;
  CHECK(advised % (uint64_t{2} << 20) == 0);
  CHECK(advised <= kHugePageHeapReserveBytes);
  // The last whole 2 MiB page below the heap's end (the advice covers
  // whole pages only).
  const uintptr_t end = reinterpret_cast<uintptr_t>(sbrk(0));
  const uintptr_t last_page_end = end & ~((uintptr_t{2} << 20) - 1);
  // THPeligible is in smaps from Linux 5.0 on (-1: the field is absent, nothing to read).
  if (ThpEligibleAt(last_page_end - 1) != -1) {
    CHECK(ThpEligibleAt(last_page_end - 1) == 1);
    CHECK(ThpEligibleAt(last_page_end - (uintptr_t{2} << 20)) == 1);
  }
  // Blocks from the advised heap hold what is written to them.
  char* block = static_cast<char*>(std::malloc(size_t{4} << 20));
  REQUIRE(block != nullptr);
  std::memset(block, 0x5a, size_t{4} << 20);
  CHECK(block[0] == 0x5a);
  CHECK(block[(size_t{4} << 20) - 1] == 0x5a);
  std::free(block);
}

}  // namespace
}  // namespace fanfold
