// RangeTextQueue: text made at once by several producer threads, one per
// key range of a result (each range's rows already formatted, in order),
// handed to one consumer thread in range order: every chunk of range 0,
// then of range 1, and so on — so the bytes are those of one writer over
// all the rows, whatever the number of ranges. A chunk carries one piece
// of text per copy of the result (the kept copy, a rounded shown copy).
// Memory is bounded: the range being read may queue kCurrentChunks chunks;
// the ranges after it together queue at most `ahead_bytes` (a producer
// past that waits until its range's turn), so the text held does not grow
// with the result. Producers that were closed (Close) get false from Put
// and should stop. Thread-safe as described; one consumer.
#pragma once

#include <condition_variable>
#include <cstddef>
#include <cstdint>
#include <deque>
#include <mutex>
#include <string>
#include <vector>

#include "common/base/status.h"

namespace fanfold {

class RangeTextQueue {
 public:
  // One piece of text per copy.
  using Chunk = std::vector<std::string>;
  static constexpr size_t kCurrentChunks = 8;

  RangeTextQueue(size_t ranges, uint64_t ahead_bytes);

  // Producer of `range`: queues a chunk (taking it) and returns true, after
  // waiting for room; false once closed (the chunk is dropped).
  bool Put(size_t range, Chunk* chunk);
  // Producer of `range`: it made its last chunk; `outcome` is its walk's
  // status (ok, or why it stopped).
  void Finish(size_t range, Status outcome);
  // Every range not finished yet finishes with `outcome` (its producer
  // will never run: the walk ended before it).
  void FinishRest(const Status& outcome);

  // Consumer: the next chunk of the current range into *chunk, true; or
  // false when the current range has finished and every chunk of it was
  // taken (*outcome: its Finish status). Next range: Advance().
  bool Next(Chunk* chunk, Status* outcome);
  // Consumer: the range after the current one becomes current.
  void Advance();
  // Any thread: producers stop (Put returns false, waits end).
  void Close();

 private:
  struct Range {
    std::deque<Chunk> chunks;
    uint64_t bytes = 0;
    bool finished = false;
    Status outcome;
  };
  bool HasRoom(size_t range) const;  // REQUIRES: mu_ held

  std::mutex mu_;
  std::condition_variable changed_;
  std::vector<Range> ranges_;
  size_t current_ = 0;
  uint64_t ahead_limit_;
  uint64_t ahead_ = 0;  // bytes queued by ranges after current_
  bool closed_ = false;
};

}  // namespace fanfold
