// BodyCompressor: compresses a partial's body (common/partial/partial_codec.h)
// on a helper thread while the body is still being written, so that a
// worker's encoding of a many-group partial takes about the longer of
// writing and compressing instead of their sum. The frame is the very frame
// EncodePartial's one-call compression makes (zstd level 1, one frame that
// declares its size): zstd reads the body in place from the writer's buffer
// (a stable input buffer, whose end may move on), compressing each whole
// block as the writer says it is done, so the bytes do not depend on when
// the writer reports or on the thread — a worker with a spare core and one
// without write the same partial.
//
// The writer must know the body's exact length beforehand, and its buffer
// must not move while the helper reads it: it reports, before each growth
// of the buffer, how many bytes are final and how long the buffer is about
// to become (BodyProgress); a growth past the room it declared makes the
// compressor stop using the buffer first (Finish then fails, and the caller
// compresses the whole body itself). The helper is started on first use and
// kept for every later body, never one per body; its bodies come one at a
// time. Not thread-safe for callers (one per worker thread).
#pragma once

#include <condition_variable>
#include <cstddef>
#include <cstdint>
#include <functional>
#include <mutex>
#include <string>
#include <string_view>
#include <thread>

namespace fanfold {

// A body's writer reporting: bytes [0, final_bytes) of its buffer are final,
// and it is about to make the buffer grow_to bytes long.
using BodyProgress = std::function<void(size_t final_bytes, size_t grow_to)>;

class BodyCompressor {
 public:
  BodyCompressor();
  ~BodyCompressor();
  BodyCompressor(const BodyCompressor&) = delete;
  BodyCompressor& operator=(const BodyCompressor&) = delete;

  // Starts one frame of exactly `total` bytes, read in place from `body`,
  // a buffer of `room` bytes (the writer's capacity) that stays where it is
  // until Finish. REQUIRES: the previous body is finished.
  void Begin(const char* body, size_t total, size_t room);
  // The writer's report (BodyProgress). Past `room`, compression stops
  // here, before the buffer can move.
  void Progress(size_t final_bytes, size_t grow_to);
  // Stops using the buffer (waits for the helper's current step): the
  // writer may then change bytes it had reported final.
  void Abandon();
  // Waits for the frame: true with *frame viewing it (valid until the next
  // Begin) once all `total` bytes were reported final; false if abandoned,
  // reported short, or zstd failed.
  bool Finish(std::string_view* frame);

  // Runs job on the helper thread (started if need be) while the caller
  // goes on (say, sizing a body while the caller sorts it); WaitPosted waits
  // for it. REQUIRES: no body begun and not finished, no job posted and not
  // waited for.
  void Post(std::function<void()> job);
  void WaitPosted();

  // Bodies shorter than this are compressed by the caller in one call: the
  // hand-over would cost more than the overlap saves.
  static constexpr size_t kMinBytes = size_t{512} << 10;
  // The helper is woken once this many more bytes are final (a zstd block).
  static constexpr size_t kStepBytes = size_t{128} << 10;

 private:
  struct Zstd;  // the compression context and its buffers (body_compressor.cc)
  void Run();   // the helper's loop

  Zstd* z_;
  std::thread helper_;
  std::mutex mu_;
  std::condition_variable wake_;  // the helper: more bytes, the end, or quit
  std::condition_variable idle_;  // the caller: the helper finished a step
  bool active_ = false;    // a body is begun and not finished or abandoned
  bool busy_ = false;      // the helper is inside zstd
  bool finishing_ = false;
  bool failed_ = false;
  bool quit_ = false;
  std::function<void()> job_;  // posted, not yet run
  bool job_done_ = true;
  size_t total_ = 0;
  size_t room_ = 0;
  size_t final_ = 0;   // reported final by the writer
  size_t woken_at_ = 0;  // final_ when the helper was last woken
  size_t fed_ = 0;     // handed to zstd
};

}  // namespace fanfold
