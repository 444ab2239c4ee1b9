// Helpers shared by the ShmTransport tests: options pointing at the test
// worker (tests/transport/transport_test_worker.cc) and a bounded wait for one event.
#pragma once

#include <doctest/doctest.h>

#include <chrono>
#include <string>

#include "common/transport/shm_transport.h"

#ifndef FANFOLD_TEST_WORKER
#error "tests/CMakeLists.txt defines FANFOLD_TEST_WORKER as the test worker's path"
#endif

namespace fanfold {

inline ShmTransportOptions TestWorkerOptions(int workers) {
  ShmTransportOptions o;
  o.worker_binary = FANFOLD_TEST_WORKER;
  o.worker_count = workers;
  return o;
}

inline ShardTask TestTask(uint32_t index, const std::string& path) {
  ShardTask t;
  t.index = index;
  t.path = path;
  return t;
}

// Waits up to limit_ms for one event; fails the test on error or timeout.
inline TransportEvent WaitEvent(Transport& t, int limit_ms = 5000) {
  TransportEvent ev;
  bool got = false;
  Status st = t.Wait(limit_ms, &ev, &got);
  REQUIRE_MESSAGE(st.ok(), st.message());
  REQUIRE_MESSAGE(got, "no transport event within ", limit_ms, " ms");
  return ev;
}

// The wall clock in ns since the Unix epoch, as the transport's start/end times are.
inline uint64_t WallNowNs() {
  return static_cast<uint64_t>(std::chrono::duration_cast<std::chrono::nanoseconds>(
                                   std::chrono::system_clock::now().time_since_epoch())
                                   .count());
}

// Milliseconds since `start`.
inline double MillisSince(std::chrono::steady_clock::time_point start) {
  return std::chrono::duration<double, std::milli>(std::chrono::steady_clock::now() - start).count();
}

}  // namespace fanfold
