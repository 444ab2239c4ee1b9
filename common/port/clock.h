// The two clocks fanfold reads, as nanosecond counts: the wall clock (for
// journal timestamps and the workers' reported times) and the monotonic clock
// (for durations, deadlines and heartbeats). Inline because the shard
// processor samples the clock every 64 records; code that must be testable
// with a fake clock reads it through Platform (platform.h) instead.
// Stateless; thread-safe.
#pragma once

#include <time.h>

#include <chrono>
#include <cstdint>

namespace fanfold {

// Nanoseconds since the Unix epoch (std::chrono::system_clock).
inline uint64_t WallNanos() {
  return static_cast<uint64_t>(
      std::chrono::duration_cast<std::chrono::nanoseconds>(std::chrono::system_clock::now().time_since_epoch())
          .count());
}

// CLOCK_MONOTONIC in nanoseconds: comparable between processes on one host
// (the clock std::chrono::steady_clock reads on Linux).
inline uint64_t MonotonicNanos() {
  timespec ts;
  ::clock_gettime(CLOCK_MONOTONIC, &ts);
  return static_cast<uint64_t>(ts.tv_sec) * 1000000000u + static_cast<uint64_t>(ts.tv_nsec);
}

}  // namespace fanfold
