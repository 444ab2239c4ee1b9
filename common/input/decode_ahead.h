// DecodeAhead: decompression overlapped with parsing. Wrap() turns a shard's
// ByteSource into one that hands its bytes out as whole blocks (LentBlock,
// byte_source.h), which a ChunkBuffer takes without copying. Threaded, one
// helper thread — started on first use and kept for every later shard, never
// one per shard — fills the next blocks (at most kAheadBlocks ahead) while the
// caller parses the current one; inline, the caller fills each block itself
// when it asks for it. Both call the inner source with exactly the same
// sequence of Read calls (each block is filled by reads of the room left in
// it until it is full, the source ends, or it fails), so the bytes, the bytes
// before an error, and the error itself are identical in both modes.
// Threaded, a study the reader names (BlockLender::SetStudy,
// block_study.h) runs on the helper on each block filled after that, right
// after filling it, and its note goes with the block (the first block may
// be filled before: the helper starts at once). Inline the study is not
// run (the reader does that work itself, nearer in the cache).
// Blocks are kept for reuse (a worker reads many shards). The wrapped source
// stops and waits for the helper when destroyed; one wrapped source at a time
// per DecodeAhead. Not thread-safe for callers (one per worker thread).
// When a worker uses it: docs/decode-ahead.md.
#pragma once

#include <condition_variable>
#include <cstddef>
#include <cstdint>
#include <functional>
#include <memory>
#include <mutex>
#include <thread>

#include "common/input/byte_source.h"

namespace fanfold {

// Decompressed bytes per lent block, the room kept before them for the
// unconsumed tail of the block before (a record cut by the block's edge),
// and the room after them (parsers' padding).
inline constexpr size_t kAheadBlockBytes = size_t{1} << 20;
inline constexpr size_t kAheadFrontBytes = size_t{64} << 10;
inline constexpr size_t kAheadTailBytes = 4096;
// Filled blocks waiting, at most, before the helper waits for the parser.
inline constexpr size_t kAheadBlocks = 2;

// The job file's "inputs"/"decode_ahead": "auto" (default), "on", "off".
enum class AheadChoice { kAuto, kOn, kOff };
// "auto", "on" or "off".
const char* AheadChoiceName(AheadChoice choice);

// Whether a worker fills blocks on a helper thread: "on" always, "off"
// never, "auto" iff the workers on this machine (0: not known) are fewer
// than its hardware threads, so that -j N on N cores does not oversubscribe
// them (docs/decode-ahead.md has the measurements behind the rule).
bool AheadThreaded(AheadChoice choice, unsigned workers_on_host);

// Shards whose file (or chunk) is smaller than this are read directly, as
// before: a tiny shard fits in one read, and the dispatch rate of many tiny
// shards must not pay for a hand-over.
inline constexpr uint64_t kAheadMinFileBytes = uint64_t{256} << 10;

class DecodeAhead {
 public:
  explicit DecodeAhead(bool threaded, size_t block_bytes = kAheadBlockBytes);
  ~DecodeAhead();
  DecodeAhead(const DecodeAhead&) = delete;
  DecodeAhead& operator=(const DecodeAhead&) = delete;

  // The source lending inner's bytes in blocks. REQUIRES: the previous
  // wrapped source is destroyed; the result is destroyed before *this.
  std::unique_ptr<ByteSource> Wrap(std::unique_ptr<ByteSource> inner);

  bool threaded() const { return threaded_; }

  class Pool;  // blocks kept for reuse (decode_ahead.cc)

 private:
  friend class AheadSource;
  // Runs job on the helper thread (starting it on first use); waits until
  // the previous job has returned.
  void Start(std::function<void()> job);

  bool threaded_;
  size_t block_bytes_;
  std::shared_ptr<Pool> pool_;
  std::thread helper_;
  std::mutex mu_;
  std::condition_variable cv_;
  std::function<void()> job_;  // empty: the helper is idle
  bool quit_ = false;
};

}  // namespace fanfold
