// ShmTransport against the real test worker process: results, failures,
// spill files and start-up errors. Faults (deaths, cleanup) are in
// shm_transport_faults_test.cc.
#include <doctest/doctest.h>
#include <stdlib.h>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <filesystem>
#include <thread>
#include <vector>

#include "common/port/process_control.h"
#include "common/port/shm_segment.h"
#include "tests/transport/shm_transport_test_util.h"
#include "tests/transport/transport_test_payload.h"

namespace fanfold {
namespace {

std::string MakeTempDir() {
  std::string templ = (std::filesystem::temp_directory_path() / "fanfold-spill-XXXXXX").string();
  REQUIRE(::mkdtemp(templ.data()) != nullptr);
  return templ;
}

size_t EntriesIn(const std::string& dir) {
  size_t n = 0;
  for (const auto& e : std::filesystem::directory_iterator(dir)) n += e.exists() ? 1 : 0;
  return n;
}

// Intent: many tiny shards over 3 workers all come back exactly once, each with its own bytes,
// fast enough for thousands of shards per second.
TEST_CASE("ShmTransport round-trips 5000 tiny shards over 3 workers") {
  auto t = ShmTransport::Create(TestWorkerOptions(3));
  REQUIRE_MESSAGE(t.ok(), t.status().message());
  const uint32_t kTasks = 5000;
  auto size_of = [](uint32_t i) { return size_t{1} + i % 40; };
  std::vector<int> seen(kTasks, 0);
  std::vector<int> per_worker(3, 0);
  int wrong = 0;
  uint32_t next = 0, done = 0;
  const auto start = std::chrono::steady_clock::now();
  while (done < kTasks) {
    for (int w = 0; w < 3; ++w) {
      if (next < kTasks && (*t)->idle(w)) {
        REQUIRE((*t)->Assign(w, TestTask(next, "echo:" + std::to_string(size_of(next)))).ok());
        ++next;
      }
    }
    TransportEvent ev = WaitEvent(**t);
    REQUIRE(ev.kind == TransportEvent::Kind::kDone);
    REQUIRE(ev.shard < kTasks);
    if (ev.partial != TestPayload(ev.shard, size_of(ev.shard))) ++wrong;
    ++seen[ev.shard];
    ++per_worker[static_cast<size_t>(ev.worker)];
    ++done;
  }
  const double ms = MillisSince(start);
  MESSAGE("5000 tiny shards over 3 workers: ", ms, " ms, ", kTasks / (ms / 1000.0), " shards/s");
  CHECK(wrong == 0);
  CHECK(std::count(seen.begin(), seen.end(), 1) == static_cast<long>(kTasks));
  for (int w = 0; w < 3; ++w) CHECK(per_worker[static_cast<size_t>(w)] > 0);
}

// Intent: one worker holds up to kTaskRingSlots shards at once; they run in assignment order,
// each comes back with its own bytes, and the worker's start/end times never overlap and lie
// within the coordinator's own clock readings around the whole batch.
TEST_CASE("ShmTransport queues several shards on one worker") {
  auto t = ShmTransport::Create(TestWorkerOptions(1));
  REQUIRE_MESSAGE(t.ok(), t.status().message());
  CHECK((*t)->room(0) == static_cast<int>(kTaskRingSlots));
  const uint64_t before = WallNowNs();
  for (uint32_t i = 0; i < kTaskRingSlots; ++i) {
    REQUIRE((*t)->Assign(0, TestTask(i, i == 0 ? "sleep:30" : "echo:" + std::to_string(100 + i))).ok());
  }
  CHECK((*t)->room(0) == 0);
  CHECK_FALSE((*t)->idle(0));
  CHECK((*t)->Assign(0, TestTask(99, "echo:1")).code() == Status::Code::kInternal);
  uint64_t last_end = before;
  for (uint32_t i = 0; i < kTaskRingSlots; ++i) {
    TransportEvent ev = WaitEvent(**t);
    REQUIRE(ev.kind == TransportEvent::Kind::kDone);
    CHECK(ev.shard == i);
    CHECK(ev.partial == TestPayload(i, i == 0 ? 8 : 100 + i));
    CHECK(ev.start_ns >= last_end);
    CHECK(ev.end_ns >= ev.start_ns);
    if (i == 0) CHECK(ev.end_ns - ev.start_ns >= 25'000'000);  // it slept 30 ms
    last_end = ev.end_ns;
  }
  CHECK(last_end <= WallNowNs());
  CHECK((*t)->idle(0));
}

// Intent: Running names the shard a worker is processing and when it began, and nothing once
// it is done (the time limit relies on it).
TEST_CASE("ShmTransport reports the running shard and its start") {
  auto t = ShmTransport::Create(TestWorkerOptions(1));
  REQUIRE_MESSAGE(t.ok(), t.status().message());
  uint32_t shard = 0;
  uint64_t since = 0;
  CHECK_FALSE((*t)->Running(0, &shard, &since));
  const uint64_t before = WallNowNs();
  REQUIRE((*t)->Assign(0, TestTask(41, "sleep:300")).ok());
  REQUIRE((*t)->Assign(0, TestTask(42, "echo:5")).ok());
  const auto start = std::chrono::steady_clock::now();
  while (!(*t)->Running(0, &shard, &since) && MillisSince(start) < 250) {
    std::this_thread::sleep_for(std::chrono::milliseconds(2));
  }
  REQUIRE((*t)->Running(0, &shard, &since));
  CHECK(shard == 41);
  CHECK(since >= before);
  CHECK(since <= WallNowNs());
  CHECK(WaitEvent(**t).shard == 41);
  CHECK(WaitEvent(**t).shard == 42);
  CHECK_FALSE((*t)->Running(0, &shard, &since));
}

// Intent: partials that together overflow the result area are placed around it as a ring: with
// a coordinator that collects late, the worker waits for room instead of overwriting a partial
// not yet taken, and every payload arrives intact (sizes chosen so that the ring wraps).
TEST_CASE("ShmTransport reuses the result area as a ring") {
  ShmTransportOptions o = TestWorkerOptions(1);
  o.result_area_bytes = 64 * 1024;
  auto t = ShmTransport::Create(o);
  REQUIRE_MESSAGE(t.ok(), t.status().message());
  const uint32_t kTasks = 60;
  auto size_of = [](uint32_t i) { return size_t{9000} + (i * 7919u) % 23000; };
  uint32_t next = 0, done = 0;
  int wrong = 0;
  while (done < kTasks) {
    while (next < kTasks && (*t)->room(0) > 0) {
      REQUIRE((*t)->Assign(0, TestTask(next, "echo:" + std::to_string(size_of(next)))).ok());
      ++next;
    }
    std::this_thread::sleep_for(std::chrono::milliseconds(done % 3 == 0 ? 5 : 0));  // collect late
    TransportEvent ev = WaitEvent(**t);
    REQUIRE(ev.kind == TransportEvent::Kind::kDone);
    CHECK(ev.shard == done);
    if (ev.partial != TestPayload(ev.shard, size_of(ev.shard))) ++wrong;
    ++done;
  }
  CHECK(wrong == 0);
}

// Intent: a shard the worker rejects comes back as kFailed with the worker's message, and the
// same worker process goes on serving.
TEST_CASE("ShmTransport reports a failing shard with its message") {
  auto t = ShmTransport::Create(TestWorkerOptions(1));
  REQUIRE_MESSAGE(t.ok(), t.status().message());
  const int pid = (*t)->worker_pid(0);
  REQUIRE((*t)->Assign(0, TestTask(4, "fail:bad record at line 7")).ok());
  CHECK_FALSE((*t)->idle(0));
  TransportEvent ev = WaitEvent(**t);
  CHECK(ev.kind == TransportEvent::Kind::kFailed);
  CHECK(ev.shard == 4);
  CHECK(ev.message == "bad record at line 7");
  CHECK(ev.partial.empty());
  CHECK((*t)->worker_pid(0) == pid);
  REQUIRE((*t)->Assign(0, TestTask(5, "echo:30")).ok());
  ev = WaitEvent(**t);
  CHECK(ev.kind == TransportEvent::Kind::kDone);
  CHECK(ev.partial == TestPayload(5, 30));
}

// Intent: an error message longer than the channel's 1024 bytes is cut at a UTF-8 character
// boundary (3-byte U+20AC: the cut at 1024 falls inside a character, so 1023 bytes remain).
TEST_CASE("ShmTransport cuts a long worker error at a character boundary") {
  auto t = ShmTransport::Create(TestWorkerOptions(1));
  REQUIRE_MESSAGE(t.ok(), t.status().message());
  REQUIRE((*t)->Assign(0, TestTask(1, "longerror:2000")).ok());
  TransportEvent ev = WaitEvent(**t);
  REQUIRE(ev.kind == TransportEvent::Kind::kFailed);
  std::string expected;
  for (int i = 0; i < 341; ++i) expected += "\xe2\x82\xac";
  CHECK(ev.message.size() == 1023);
  CHECK(ev.message == expected);
}

// Intent: a partial larger than the result area travels through a spill file that is gone
// afterwards; one that exactly fills the area stays in shared memory.
TEST_CASE("ShmTransport spills a partial bigger than the result area to a file") {
  const std::string dir = MakeTempDir();
  ShmTransportOptions o = TestWorkerOptions(1);
  o.result_area_bytes = 64 * 1024;
  o.spill_dir = dir;
  {
    auto t = ShmTransport::Create(o);
    REQUIRE_MESSAGE(t.ok(), t.status().message());
    REQUIRE((*t)->Assign(0, TestTask(9, "big:200000")).ok());
    TransportEvent ev = WaitEvent(**t);
    REQUIRE_MESSAGE(ev.kind == TransportEvent::Kind::kDone, ev.message);
    CHECK(ev.partial.size() == 200000);
    CHECK(ev.partial == TestPayload(9, 200000));
    CHECK(EntriesIn(dir) == 0);
    REQUIRE((*t)->Assign(0, TestTask(10, "echo:65536")).ok());
    ev = WaitEvent(**t);
    REQUIRE(ev.kind == TransportEvent::Kind::kDone);
    CHECK(ev.partial == TestPayload(10, 65536));
  }
  std::filesystem::remove_all(dir);
}

// Intent: without a spill directory an oversized partial is a clear shard failure, not a crash.
TEST_CASE("ShmTransport fails an oversized partial when no spill directory is set") {
  ShmTransportOptions o = TestWorkerOptions(1);
  o.result_area_bytes = 4096;
  auto t = ShmTransport::Create(o);
  REQUIRE_MESSAGE(t.ok(), t.status().message());
  REQUIRE((*t)->Assign(0, TestTask(2, "big:5000")).ok());
  TransportEvent ev = WaitEvent(**t);
  CHECK(ev.kind == TransportEvent::Kind::kFailed);
  CHECK(ev.message.find("exceeds the 4096-byte result area") != std::string::npos);
}

// Intent: a path longer than the channel holds is refused at Assign, leaving the worker idle;
// one of exactly the maximum length arrives whole, with every other task field.
TEST_CASE("ShmTransport carries every task field and rejects an over-long path") {
  auto t = ShmTransport::Create(TestWorkerOptions(1));
  REQUIRE_MESSAGE(t.ok(), t.status().message());
  Status st = (*t)->Assign(0, TestTask(0, std::string(kMaxPathBytes + 1, 'p')));
  CHECK(st.code() == Status::Code::kInvalidArgument);
  CHECK(st.message().find("at most 4096") != std::string::npos);
  CHECK((*t)->idle(0));
  ShardTask task = TestTask(77, "fields:" + std::string(kMaxPathBytes - 7, 'x'));
  task.attempt = 3;
  task.offset = 1ull << 40;
  task.length = 123456789;
  task.compression = Compression::kGzip;
  REQUIRE((*t)->Assign(0, task).ok());
  TransportEvent ev = WaitEvent(**t);
  REQUIRE(ev.kind == TransportEvent::Kind::kDone);
  CHECK(ev.shard == 77);
  CHECK(ev.partial == "index=77 attempt=3 offset=1099511627776 length=123456789 compression=" +
                          std::to_string(static_cast<int>(Compression::kGzip)) + " path_bytes=4096");
}

// Intent: progress reported by the process function is visible to the coordinator mid-shard.
TEST_CASE("ShmTransport shows a worker's progress while it works") {
  auto t = ShmTransport::Create(TestWorkerOptions(1));
  REQUIRE_MESSAGE(t.ok(), t.status().message());
  REQUIRE((*t)->Assign(0, TestTask(3, "progress:1234:400")).ok());
  const auto start = std::chrono::steady_clock::now();
  while ((*t)->records_done(0) != 1234 && MillisSince(start) < 350) {
    std::this_thread::sleep_for(std::chrono::milliseconds(2));
  }
  CHECK((*t)->records_done(0) == 1234);
  CHECK((*t)->heartbeat_age_ms(0) < 1000);
  TransportEvent ev = WaitEvent(**t);
  CHECK(ev.kind == TransportEvent::Kind::kDone);
}

// Intent: Wait with nothing outstanding returns no event after about the timeout.
TEST_CASE("ShmTransport Wait times out without an event") {
  auto t = ShmTransport::Create(TestWorkerOptions(2));
  REQUIRE_MESSAGE(t.ok(), t.status().message());
  TransportEvent ev;
  bool got = true;
  const auto start = std::chrono::steady_clock::now();
  REQUIRE((*t)->Wait(60, &ev, &got).ok());
  const double ms = MillisSince(start);
  CHECK_FALSE(got);
  CHECK(ms >= 55);
  CHECK(ms < 1000);
}

// Intent: a worker that dies before reporting ready fails Create with its exit status and its
// last stderr line, and leaves no segment behind.
TEST_CASE("ShmTransport::Create reports a worker that fails at start") {
  ShmTransportOptions o = TestWorkerOptions(2);
  o.worker_args = {"--die-at-start"};
  auto t = ShmTransport::Create(o);
  REQUIRE_FALSE(t.ok());
  CHECK(t.status().message().find("exited with status 5 before it was ready") != std::string::npos);
  CHECK(t.status().message().find("cannot read the job file (on purpose)") != std::string::npos);
  CHECK(ShmSegment::ListSegmentsOf(CurrentPid()).empty());
}

// Intent: a missing worker program is a clear error naming it.
TEST_CASE("ShmTransport::Create reports a missing worker program") {
  ShmTransportOptions o = TestWorkerOptions(1);
  o.worker_binary = "/nonexistent/fanfold-worker";
  auto t = ShmTransport::Create(o);
  REQUIRE_FALSE(t.ok());
  CHECK(t.status().message().find("cannot run '/nonexistent/fanfold-worker'") != std::string::npos);
  CHECK(ShmSegment::ListSegmentsOf(CurrentPid()).empty());
}

}  // namespace
}  // namespace fanfold
