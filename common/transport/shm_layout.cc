#include "common/transport/shm_layout.h"

#include <chrono>
#include <cstring>
#include <new>

namespace fanfold {
namespace {

constexpr uint64_t kMaxResultAreaBytes = 1ull << 30;
constexpr uint32_t kMaxWorkers = 4096;

uint64_t RoundUp(uint64_t v, uint64_t to) { return (v + to - 1) / to * to; }

ShmSemaphore* SemAt(unsigned char* slot) {
  return std::launder(reinterpret_cast<ShmSemaphore*>(slot));
}

}  // namespace

uint64_t ShmGeometry::results_offset() const {
  return RoundUp(kHeaderBytes + uint64_t{worker_count} * kChannelBytes, kPageBytes);
}

uint64_t ShmGeometry::total_bytes() const {
  return results_offset() + uint64_t{worker_count} * result_area_bytes;
}

Result<ShmGeometry> ShmGeometry::Make(uint32_t worker_count, uint64_t result_area_bytes) {
  if (worker_count == 0 || worker_count > kMaxWorkers) {
    return Status::InvalidArgument("worker count must be between 1 and " +
                                   std::to_string(kMaxWorkers) + ", got " +
                                   std::to_string(worker_count));
  }
  if (result_area_bytes < kPageBytes || result_area_bytes > kMaxResultAreaBytes) {
    return Status::InvalidArgument("result area size must be between 4 KiB and 1 GiB, got " +
                                   std::to_string(result_area_bytes) + " bytes");
  }
  ShmGeometry g;
  g.worker_count = worker_count;
  g.result_area_bytes = RoundUp(result_area_bytes, kPageBytes);
  return g;
}

Result<ShmView> ShmView::Initialize(void* base, size_t size, const ShmGeometry& geometry,
                                    uint64_t coordinator_pid, std::string_view spill_dir) {
  if (size < geometry.total_bytes()) {
    return Status::Internal("shared-memory mapping smaller than its layout");
  }
  if (spill_dir.size() > kMaxPathBytes) {
    return Status::InvalidArgument("spill directory path is " + std::to_string(spill_dir.size()) +
                                   " bytes; at most " + std::to_string(kMaxPathBytes) +
                                   " fit in the shared-memory header");
  }
  char* b = static_cast<char*>(base);
  // Value-initialised: every counter and sequence number starts at 0.
  ShmHeader* h = new (b) ShmHeader{};
  h->magic = kShmMagic;
  h->version = kShmVersion;
  h->worker_count = geometry.worker_count;
  h->coordinator_pid = coordinator_pid;
  h->total_bytes = geometry.total_bytes();
  h->channels_offset = kHeaderBytes;
  h->channel_bytes = kChannelBytes;
  h->results_offset = geometry.results_offset();
  h->result_area_bytes = geometry.result_area_bytes;
  h->spill_dir_length = static_cast<uint32_t>(spill_dir.size());
  std::memcpy(h->spill_dir, spill_dir.data(), spill_dir.size());
  new (h->done_sem) ShmSemaphore(0);
  for (uint32_t w = 0; w < geometry.worker_count; ++w) {
    ShmChannel* c = new (b + kHeaderBytes + uint64_t{w} * kChannelBytes) ShmChannel{};
    new (c->work_sem) ShmSemaphore(0);
  }
  return ShmView(b);
}

Result<ShmView> ShmView::Attach(void* base, size_t size) {
  if (size < kHeaderBytes) return Status::Corrupt("shared-memory segment too small for a header");
  const ShmHeader* h = reinterpret_cast<const ShmHeader*>(base);
  if (h->magic != kShmMagic) return Status::Corrupt("not a fanfold shared-memory segment (bad magic)");
  if (h->version != kShmVersion) {
    return Status::Corrupt("shared-memory layout version " + std::to_string(h->version) +
                           ", this worker speaks " + std::to_string(kShmVersion));
  }
  Result<ShmGeometry> g = ShmGeometry::Make(h->worker_count, h->result_area_bytes);
  if (!g.ok()) return g.status().WithContext("shared-memory header");
  if (h->channels_offset != kHeaderBytes || h->channel_bytes != kChannelBytes ||
      h->results_offset != g->results_offset() || h->total_bytes != g->total_bytes() ||
      h->result_area_bytes != g->result_area_bytes || h->total_bytes > size ||
      h->spill_dir_length > kMaxPathBytes) {
    return Status::Corrupt("shared-memory header sizes do not match the mapping");
  }
  return ShmView(static_cast<char*>(base));
}

void ShmView::Destroy() {
  if (!valid()) return;
  for (uint32_t w = 0; w < worker_count(); ++w) work_sem(w).~ShmSemaphore();
  done_sem().~ShmSemaphore();
  header_ = nullptr;
  base_ = nullptr;
}

ShmChannel& ShmView::channel(uint32_t w) const {
  return *std::launder(reinterpret_cast<ShmChannel*>(base_ + kHeaderBytes + uint64_t{w} * kChannelBytes));
}

char* ShmView::result_area(uint32_t w) const {
  return base_ + header_->results_offset + uint64_t{w} * header_->result_area_bytes;
}

ShmSemaphore& ShmView::done_sem() const { return *SemAt(header_->done_sem); }
ShmSemaphore& ShmView::work_sem(uint32_t w) const { return *SemAt(channel(w).work_sem); }

bool SemWaitFor(ShmSemaphore& sem, int timeout_ms) {
  // POSIX sem_timedwait takes CLOCK_REALTIME; Boost passes a system_clock
  // time point through unchanged when its period is nanoseconds.
  auto deadline = std::chrono::time_point_cast<std::chrono::nanoseconds>(
      std::chrono::system_clock::now() + std::chrono::milliseconds(timeout_ms));
  try {
    return sem.timed_wait(deadline);
  } catch (const std::exception&) {
    return false;  // EINTR: a signal arrived; the caller re-checks its flags
  }
}

void SemPost(ShmSemaphore& sem) {
  try {
    sem.post();
  } catch (const std::exception&) {
    // Only EOVERFLOW is possible: the waiter is far behind and will scan anyway.
  }
}

uint32_t CopyBoundedText(std::string_view text, char* dst, size_t cap) {
  size_t n = text.size();
  if (n > cap) {
    n = cap;
    // Step back over continuation bytes (10xxxxxx) to the start of the cut character.
    while (n > 0 && (static_cast<unsigned char>(text[n]) & 0xC0) == 0x80) --n;
  }
  std::memcpy(dst, text.data(), n);
  return static_cast<uint32_t>(n);
}

}  // namespace fanfold
