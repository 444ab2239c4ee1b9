#include "coordinator/output/range_text_queue.h"

namespace fanfold {
namespace {
uint64_t ChunkBytes(const RangeTextQueue::Chunk& c) {
  uint64_t n = 0;
  for (const std::string& s : c) n += s.size();
  return n;
}
}  // namespace

RangeTextQueue::RangeTextQueue(size_t ranges, uint64_t ahead_bytes) : ranges_(ranges), ahead_limit_(ahead_bytes) {}

bool RangeTextQueue::HasRoom(size_t range) const {
  if (range == current_) return ranges_[range].chunks.size() < kCurrentChunks;
  // Ranges ahead share the limit; one may always queue when none holds
  // anything, so a chunk larger than the limit still passes.
  return ahead_ == 0 || ahead_ < ahead_limit_;
}

bool RangeTextQueue::Put(size_t range, Chunk* chunk) {
  std::unique_lock<std::mutex> lock(mu_);
  changed_.wait(lock, [&] { return closed_ || HasRoom(range); });
  if (closed_) return false;
  const uint64_t bytes = ChunkBytes(*chunk);
  Range& r = ranges_[range];
  r.bytes += bytes;
  if (range != current_) ahead_ += bytes;
  r.chunks.push_back(std::move(*chunk));
  chunk->clear();
  changed_.notify_all();
  return true;
}

void RangeTextQueue::Finish(size_t range, Status outcome) {
  std::lock_guard<std::mutex> lock(mu_);
  ranges_[range].finished = true;
  ranges_[range].outcome = std::move(outcome);
  changed_.notify_all();
}

void RangeTextQueue::FinishRest(const Status& outcome) {
  std::lock_guard<std::mutex> lock(mu_);
  for (Range& r : ranges_) {
    if (r.finished) continue;
    r.finished = true;
    r.outcome = outcome;
  }
  changed_.notify_all();
}

bool RangeTextQueue::Next(Chunk* chunk, Status* outcome) {
  std::unique_lock<std::mutex> lock(mu_);
  Range& r = ranges_[current_];
  changed_.wait(lock, [&] { return !r.chunks.empty() || r.finished; });
  if (r.chunks.empty()) {
    *outcome = r.outcome;
    return false;
  }
  *chunk = std::move(r.chunks.front());
  r.chunks.pop_front();
  r.bytes -= ChunkBytes(*chunk);
  changed_.notify_all();
  return true;
}

void RangeTextQueue::Advance() {
  std::lock_guard<std::mutex> lock(mu_);
  if (current_ + 1 >= ranges_.size()) return;
  ++current_;
  ahead_ -= ranges_[current_].bytes;
  changed_.notify_all();
}

void RangeTextQueue::Close() {
  std::lock_guard<std::mutex> lock(mu_);
  closed_ = true;
  changed_.notify_all();
}

}  // namespace fanfold
