// ShmLayout: the binary layout of a run's shared-memory segment, specified
// here once (prose copy: docs/shared-memory.md). The coordinator builds the
// segment before any worker starts; from then on every field has exactly one
// writer, named beside it. Nothing here is a lock: a worker can die at any
// instruction and leave nothing held. Host-local, so native little-endian.
//
//   offset                               size                 contents
//   0                                    kHeaderBytes         ShmHeader
//   kHeaderBytes + w*kChannelBytes       kChannelBytes        ShmChannel of worker w
//   results_offset + w*result_area_bytes result_area_bytes    result area of worker w
//   (results_offset is page-aligned; result_area_bytes is a multiple of kPageBytes)
//
// Handoff on channel w (seq counts assignments, from 1). A channel holds a
// ring of kTaskRingSlots tasks and as many result descriptors, so a worker
// starts its next shard without waiting for the coordinator. Seq s uses
// tasks[s % kTaskRingSlots] and results[s % kTaskRingSlots]; the result
// area is a circular byte buffer of the partials not yet taken.
//  1. Coordinator, only while assign_seq - taken_seq < kTaskRingSlots:
//     writes tasks[seq % K], then assign_seq = seq (release), posts work_sem.
//  2. Worker, for each seq after the last one it completed, in order: loads
//     assign_seq (acquire), reads the task, stores started_ns and then
//     started_seq = seq (release), processes. It places the partial in free
//     bytes of its result area (bytes of results newer than taken_seq are
//     in use; if none are free it sets wants_take = 1, re-checks taken_seq
//     and sleeps on work_sem) or in a spill file, writes results[seq % K],
//     then done_seq = seq (release), then posts done_sem.
//  3. Coordinator: after a done_sem wake or a timeout slice, loads done_seq
//     (acquire) of each channel with assignments; every seq in
//     (taken_seq, done_seq] has a final result. It copies them out in seq
//     order, storing taken_seq = seq (seq_cst) after each, and posts
//     work_sem iff wants_take (seq_cst) is set.
// Start: the worker sets started_seq = done_seq = assign_seq, clears its
//  counters, then ready_token = spawn_token (release) and posts done_sem.
// Quit: coordinator sets header.quit = 1 (release) and posts every work_sem.
// Restart: after reaping a dead worker the coordinator settles every
//  assignment of the slot (taken_seq = assign_seq), bumps spawn_token and
//  starts a new one; it never writes the worker's fields itself.
#pragma once

#include <atomic>
#include <boost/interprocess/sync/interprocess_semaphore.hpp>
#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>
#include <type_traits>

#include "common/base/status.h"

namespace fanfold {

inline constexpr uint64_t kShmMagic = 0x31444c4f464e4146ull;  // "FANFOLD1" read as bytes
inline constexpr uint32_t kShmVersion = 3;
inline constexpr size_t kPageBytes = 4096;
inline constexpr size_t kMaxPathBytes = 4096;      // task path / spill directory; no NUL kept
inline constexpr size_t kMaxErrorBytes = 1024;     // worker error text, cut at a UTF-8 boundary
inline constexpr size_t kMaxSpillNameBytes = 256;  // file name inside the spill directory
inline constexpr size_t kSemSlotBytes = 64;        // room for one interprocess_semaphore
inline constexpr size_t kHeaderBytes = 8192;
inline constexpr size_t kChannelBytes = 24576;
inline constexpr uint32_t kTaskRingSlots = 4;       // most assignments a channel holds at once
inline constexpr uint64_t kDefaultResultAreaBytes = 8u << 20;

// Worker argv convention: <worker> --segment NAME --slot I <extra args...>
inline constexpr const char* kSegmentFlag = "--segment";
inline constexpr const char* kSlotFlag = "--slot";

inline constexpr uint32_t kResultOk = 0;
inline constexpr uint32_t kResultFailed = 1;

using ShmSemaphore = boost::interprocess::interprocess_semaphore;

struct ShmHeader {
  // Written by the coordinator before the first worker starts; read-only after.
  uint64_t magic;              // kShmMagic
  uint32_t version;            // kShmVersion
  uint32_t worker_count;
  uint64_t coordinator_pid;    // workers exit when their parent is no longer this
  uint64_t total_bytes;        // size of the whole segment
  uint64_t channels_offset;    // == kHeaderBytes
  uint64_t channel_bytes;      // == kChannelBytes
  uint64_t results_offset;
  uint64_t result_area_bytes;
  std::atomic<uint32_t> quit;  // coordinator: 1 = every worker exits
  uint32_t spill_dir_length;   // 0 = no spill directory
  alignas(64) unsigned char done_sem[kSemSlotBytes];  // posted by workers, waited on by the coordinator
  char spill_dir[kMaxPathBytes];  // where partials too big for a result area go
};

// One assignment in a channel's ring; written by the coordinator only, while
// the worker is not reading it (see the handoff above).
struct ShmTask {
  uint32_t index;
  uint32_t attempt;
  uint64_t offset;
  uint64_t length;
  uint32_t compression;  // Compression as an integer
  uint32_t path_length;
  uint64_t table_bytes;  // ShardTask::table_bytes
  char path[kMaxPathBytes];
};

// The outcome of one assignment; written by the worker before it publishes
// done_seq, read by the coordinator until it advances taken_seq past it.
struct ShmResult {
  uint32_t status;             // kResultOk / kResultFailed
  uint32_t in_file;            // 1: the partial is in spill_name, not the area
  uint64_t offset;             // of the partial in the result area
  uint64_t length;             // bytes of the partial
  uint64_t start_ns;           // wall clock (ns since the Unix epoch): the shard's
  uint64_t end_ns;             //   start and end in the worker
  uint32_t error_length;
  uint32_t spill_name_length;
  char error[kMaxErrorBytes];  // cut at a UTF-8 character boundary
  char spill_name[kMaxSpillNameBytes];
};

struct ShmChannel {
  // ---- written by the coordinator ----
  alignas(64) unsigned char work_sem[kSemSlotBytes];  // posted by the coordinator, waited on by the worker
  std::atomic<uint64_t> assign_seq;   // seq of the latest assignment (0 = none yet)
  std::atomic<uint64_t> spawn_token;  // bumped before each worker process is started for this slot
  std::atomic<uint64_t> taken_seq;    // seq of the latest result copied out (or settled after a death)
  alignas(64) ShmTask tasks[kTaskRingSlots];  // seq s in tasks[s % kTaskRingSlots]

  // ---- written by the worker process of this slot ----
  alignas(64) std::atomic<uint64_t> ready_token;  // == spawn_token once this worker is ready
  std::atomic<uint64_t> worker_pid;
  std::atomic<uint64_t> heartbeat_count;  // bumped on every wake-up and progress report
  std::atomic<uint64_t> heartbeat_ns;     // MonotonicNanos() at the last bump
  std::atomic<uint64_t> records_done;     // progress within the current shard
  std::atomic<uint64_t> bytes_done;
  std::atomic<uint64_t> started_seq;      // seq being processed (== done_seq between shards)
  std::atomic<uint64_t> started_ns;       // wall clock at its start
  std::atomic<uint64_t> done_seq;         // seq of the latest completed assignment
  std::atomic<uint32_t> wants_take;       // 1 while waiting for room in the result area
  ShmResult results[kTaskRingSlots];      // seq s in results[s % kTaskRingSlots]
};

static_assert(std::atomic<uint64_t>::is_always_lock_free, "shared atomics must be lock-free");
static_assert(std::atomic<uint32_t>::is_always_lock_free, "shared atomics must be lock-free");
static_assert(sizeof(ShmSemaphore) <= kSemSlotBytes, "semaphore slot too small");
static_assert(alignof(ShmSemaphore) <= 64, "semaphore slot misaligned");
static_assert(std::is_standard_layout_v<ShmHeader> && std::is_standard_layout_v<ShmChannel>);
static_assert(offsetof(ShmHeader, quit) == 64 && offsetof(ShmHeader, done_sem) == 128);
static_assert(offsetof(ShmHeader, spill_dir) == 192 && sizeof(ShmHeader) <= kHeaderBytes);
static_assert(sizeof(ShmTask) == 4136 && sizeof(ShmResult) == 1328);
static_assert(offsetof(ShmChannel, assign_seq) == 64 && offsetof(ShmChannel, taken_seq) == 80);
static_assert(offsetof(ShmChannel, tasks) == 128 && offsetof(ShmChannel, ready_token) == 16704);
static_assert(offsetof(ShmChannel, started_seq) == 16752 && offsetof(ShmChannel, done_seq) == 16768);
static_assert(offsetof(ShmChannel, wants_take) == 16776 && offsetof(ShmChannel, results) == 16784);
static_assert(sizeof(ShmChannel) <= kChannelBytes && kChannelBytes % 64 == 0);

// Sizes of a segment for a worker count and a (page-rounded) result area.
struct ShmGeometry {
  uint32_t worker_count = 0;
  uint64_t result_area_bytes = 0;
  uint64_t results_offset() const;
  uint64_t total_bytes() const;
  // Rounds result_area_bytes up to kPageBytes; rejects 0 workers and areas
  // under one page or over 1 GiB.
  static Result<ShmGeometry> Make(uint32_t worker_count, uint64_t result_area_bytes);
};

// A typed view over a mapped segment; does not own the memory.
class ShmView {
 public:
  ShmView() = default;
  // Coordinator: builds header, channels and semaphores in fresh zeroed
  // memory of geometry.total_bytes(). Rejects a spill dir over kMaxPathBytes.
  static Result<ShmView> Initialize(void* base, size_t size, const ShmGeometry& geometry,
                                    uint64_t coordinator_pid, std::string_view spill_dir);
  // Worker: checks magic, version and that every size fits the mapping.
  static Result<ShmView> Attach(void* base, size_t size);
  // Coordinator, after every worker process is gone: destroys the semaphores.
  void Destroy();

  bool valid() const { return header_ != nullptr; }
  ShmHeader& header() const { return *header_; }
  uint32_t worker_count() const { return header_->worker_count; }
  ShmChannel& channel(uint32_t w) const;
  char* result_area(uint32_t w) const;
  uint64_t result_area_bytes() const { return header_->result_area_bytes; }
  std::string_view spill_dir() const { return {header_->spill_dir, header_->spill_dir_length}; }
  ShmSemaphore& done_sem() const;
  ShmSemaphore& work_sem(uint32_t w) const;

 private:
  explicit ShmView(char* base) : base_(base), header_(reinterpret_cast<ShmHeader*>(base)) {}
  char* base_ = nullptr;
  ShmHeader* header_ = nullptr;
};

// Waits until sem can be decremented or timeout_ms passes. Returns true iff
// it was decremented; a signal interrupting the wait returns false (callers
// loop and re-check their state anyway).
bool SemWaitFor(ShmSemaphore& sem, int timeout_ms);
void SemPost(ShmSemaphore& sem);

// Copies text into dst (capacity cap), cut at a UTF-8 character boundary so
// a multi-byte character is never split. Returns the bytes written.
uint32_t CopyBoundedText(std::string_view text, char* dst, size_t cap);

}  // namespace fanfold
