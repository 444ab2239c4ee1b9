// HugePageHeap: asks Linux to back the coordinator's malloc heap with 2 MiB
// pages (transparent huge pages) where the system leaves that choice to each
// program (`/sys/kernel/mm/transparent_hugepage/enabled` is "madvise").
//
// Why: the coordinator's merge touches a few cache lines of every group's
// states for every partial, spread over hundreds of megabytes of heap; with
// 4 KiB pages nearly every one of those touches also misses the TLB and
// waits for a page walk (measured: the merge of the benchmark's 50,000-group
// partials spends most of its time there, docs/streaming-merge.md). With
// 2 MiB pages the same memory needs 512 times fewer TLB entries.
//
// How: malloc's main heap grows by moving the program break, and the kernel
// applies advice only to memory already mapped, so the heap's next
// `kReserveBytes` of address space are taken at once (address space only:
// a page is backed when first written, so the resident size does not grow
// by it) and advised; malloc is told to keep that span rather than return
// it at each free. Threads other than the first allocate from glibc's
// thread heaps, each a reservation of 64 MiB aligned on 64 MiB whose unused
// part is mapped inaccessible and opened as it grows: advising the whole
// reservation covers its growth too (the advice survives the opening).
//
// A hint only: results never depend on it, and without glibc, on another
// mode ("always" needs nothing, "never" allows nothing), under a sanitizer
// (its own allocator) or when the kernel refuses, both calls do nothing.
#pragma once

#include <cstdint>

namespace fanfold {

// The main heap's span reserved and advised at once.
inline constexpr uint64_t kHugePageHeapReserveBytes = uint64_t{1} << 30;

// Once per process (later calls, from any thread, return the first call's
// answer): reserves and advises the main heap's next span as above. Returns
// the bytes advised (0 if nothing was done).
uint64_t PreferHugePagesForHeap();

// Advises the glibc thread heap that the calling thread allocates from, iff
// PreferHugePagesForHeap advised the main heap and that thread heap is
// another. Cheap (an allocation and at most one system call): meant for the
// start of each merge thread.
void PreferHugePagesForThreadHeap();

}  // namespace fanfold
