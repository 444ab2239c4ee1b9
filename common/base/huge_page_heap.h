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
// `kReserveBytes` of address space are taken at once (address space: a
// page is backed when first written, though a first write may back a whole
// 2 MiB page, so the resident size grows by up to 2 MiB a touched page —
// measured on the merge bench: peak 241 -> 258-262 MiB) and advised; malloc
// is told to keep that span rather than return it at each free. Once
// advised, the process's heaps are never trimmed and blocks up to 32 MiB
// come from the heap (malloc's settings are process-wide): the coordinator
// keeps its peak heap resident until it exits. Threads other than the first allocate from glibc's
// thread heaps, each a reservation of 64 MiB aligned on 64 MiB whose unused
// part is mapped inaccessible and opened as it grows: advising the whole
// reservation covers its growth too (the advice survives the opening).
//
// A hint only: results never depend on it, and without glibc, on another
// mode ("always" needs nothing, "never" allows nothing), under a sanitizer
// (its own allocator) or when the kernel refuses, both calls advise
// nothing, and malloc's settings are its defaults again.
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
