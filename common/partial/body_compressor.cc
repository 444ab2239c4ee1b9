#include "common/partial/body_compressor.h"

#define ZSTD_STATIC_LINKING_ONLY  // ZSTD_c_stableInBuffer / stableOutBuffer: libzstd 1.5's, not yet "stable API"
#include <zstd.h>

namespace fanfold {

struct BodyCompressor::Zstd {
  ZSTD_CCtx* c = ZSTD_createCCtx();
  ZSTD_inBuffer in{nullptr, 0, 0};
  ZSTD_outBuffer out{nullptr, 0, 0};
  std::string frame;  // ZSTD_compressBound of the body; kept from body to body
  Zstd() = default;
  Zstd(const Zstd&) = delete;
  Zstd& operator=(const Zstd&) = delete;
  ~Zstd() { ZSTD_freeCCtx(c); }
};

BodyCompressor::BodyCompressor() : z_(new Zstd) {}

BodyCompressor::~BodyCompressor() {
  {
    std::lock_guard<std::mutex> lk(mu_);
    quit_ = true;
  }
  wake_.notify_all();
  if (helper_.joinable()) helper_.join();
  delete z_;
}

void BodyCompressor::Post(std::function<void()> job) {
  if (!helper_.joinable()) helper_ = std::thread([this] { Run(); });
  std::lock_guard<std::mutex> lk(mu_);
  job_ = std::move(job);
  job_done_ = false;
  wake_.notify_one();
}

void BodyCompressor::WaitPosted() {
  std::unique_lock<std::mutex> lk(mu_);
  idle_.wait(lk, [this] { return job_done_; });
}

void BodyCompressor::Begin(const char* body, size_t total, size_t room) {
  if (!helper_.joinable()) helper_ = std::thread([this] { Run(); });
  // Kept up to kKeepBytes, so that one huge partial does not pin its memory.
  constexpr size_t kKeepBytes = size_t{64} << 20;
  const size_t bound = ZSTD_compressBound(total);
  if (z_->frame.capacity() > kKeepBytes && bound <= kKeepBytes) std::string().swap(z_->frame);
  if (z_->frame.size() < bound) z_->frame.resize(bound);  // never shrunk: no zero-fill next time
  ZSTD_CCtx* c = z_->c;
  ZSTD_CCtx_reset(c, ZSTD_reset_session_and_parameters);
  ZSTD_CCtx_setParameter(c, ZSTD_c_compressionLevel, 1);  // EncodePartial's level
  ZSTD_CCtx_setParameter(c, ZSTD_c_stableInBuffer, 1);
  ZSTD_CCtx_setParameter(c, ZSTD_c_stableOutBuffer, 1);
  ZSTD_CCtx_setPledgedSrcSize(c, total);
  z_->in = ZSTD_inBuffer{body, 0, 0};
  z_->out = ZSTD_outBuffer{z_->frame.data(), bound, 0};
  std::lock_guard<std::mutex> lk(mu_);
  active_ = true;
  finishing_ = failed_ = false;
  total_ = total;
  room_ = room;
  final_ = woken_at_ = fed_ = 0;
}

void BodyCompressor::Progress(size_t final_bytes, size_t grow_to) {
  if (grow_to > room_) {  // the buffer would move under the helper
    Abandon();
    return;
  }
  std::lock_guard<std::mutex> lk(mu_);
  if (!active_) return;
  final_ = final_bytes;
  if (final_ - woken_at_ >= kStepBytes) {
    woken_at_ = final_;
    wake_.notify_one();
  }
}

void BodyCompressor::Abandon() {
  std::unique_lock<std::mutex> lk(mu_);
  if (active_) failed_ = true;
  active_ = false;
  idle_.wait(lk, [this] { return !busy_; });
}

bool BodyCompressor::Finish(std::string_view* frame) {
  std::unique_lock<std::mutex> lk(mu_);
  if (active_ && final_ != total_) failed_ = true;
  if (failed_) {
    active_ = false;
    idle_.wait(lk, [this] { return !busy_; });
    return false;
  }
  finishing_ = true;
  wake_.notify_one();
  idle_.wait(lk, [this] { return !active_ && !busy_; });
  if (failed_) return false;
  *frame = std::string_view(z_->frame.data(), z_->out.pos);
  return true;
}

void BodyCompressor::Run() {
  std::unique_lock<std::mutex> lk(mu_);
  for (;;) {
    wake_.wait(lk, [this] {
      return quit_ || job_ || (active_ && (finishing_ || final_ - fed_ >= kStepBytes));
    });
    if (quit_) return;
    if (job_) {
      std::function<void()> job = std::move(job_);
      job_ = nullptr;
      lk.unlock();
      job();
      lk.lock();
      job_done_ = true;
      idle_.notify_all();
      continue;
    }
    const size_t upto = final_;
    const bool end = finishing_;
    busy_ = true;
    lk.unlock();
    // zstd compresses every whole block of [0, upto) not yet compressed
    // (and, at the end, the rest), reading them in place.
    z_->in.size = upto;
    bool ok = true;
    for (;;) {
      const size_t left = ZSTD_compressStream2(z_->c, &z_->out, &z_->in, end ? ZSTD_e_end : ZSTD_e_continue);
      if (ZSTD_isError(left)) ok = false;
      // compressBound's room makes a full output impossible; checked anyway.
      if (!ok || !end || left == 0 || z_->out.pos == z_->out.size) {
        ok = ok && (!end || left == 0);
        break;
      }
    }
    lk.lock();
    busy_ = false;
    fed_ = upto;
    if (!ok) failed_ = true;
    if (!ok || end) active_ = false;
    idle_.notify_all();
  }
}

}  // namespace fanfold
