// ShmTransport under faults: workers killed mid-shard, workers that exit,
// shutdown with a busy worker, segment cleanup and permissions, stale
// segments of dead coordinators, and a coordinator killed without cleanup.
#include <doctest/doctest.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include <boost/interprocess/shared_memory_object.hpp>
#include <algorithm>
#include <chrono>
#include <csignal>
#include <filesystem>
#include <map>
#include <thread>
#include <vector>

#include "common/port/process_control.h"
#include "common/port/shm_segment.h"
#include "tests/transport/shm_transport_test_util.h"
#include "tests/transport/transport_test_payload.h"

namespace fanfold {
namespace {

namespace bip = boost::interprocess;

bool SegmentExists(const std::string& name) {
  return std::filesystem::exists(ShmSegment::FilePath(name));
}

// A pid that certainly belongs to no process now: a child we forked and reaped.
int DeadPid() {
  pid_t pid = ::fork();
  if (pid == 0) ::_exit(0);
  REQUIRE(pid > 0);
  REQUIRE(Reap(pid).ok());
  return pid;
}

void MakeSegment(const std::string& name) {
  bip::shared_memory_object shm(bip::create_only, name.c_str(), bip::read_write);
  shm.truncate(4096);
}

// Intent: a worker that dies by SIGKILL mid-shard yields kDied promptly, naming the signal, the
// shard and its last stderr line; a fresh worker takes the slot and serves the next shard.
TEST_CASE("ShmTransport reports a worker killed mid-shard and replaces it") {
  auto t = ShmTransport::Create(TestWorkerOptions(2));
  REQUIRE_MESSAGE(t.ok(), t.status().message());
  const int old_pid = (*t)->worker_pid(0);
  const int other_pid = (*t)->worker_pid(1);
  const auto start = std::chrono::steady_clock::now();
  REQUIRE((*t)->Assign(0, TestTask(17, "crash:")).ok());
  TransportEvent ev = WaitEvent(**t, 3000);
  const double ms = MillisSince(start);
  MESSAGE("crash noticed (and worker restarted) after ", ms, " ms");
  CHECK(ms < 1000);
  CHECK(ev.kind == TransportEvent::Kind::kDied);
  CHECK(ev.worker == 0);
  CHECK(ev.shard == 17);
  const std::string head = "worker 0 (pid " + std::to_string(old_pid) +
                           ") was killed by signal 9 (SIGKILL) while processing shard 17";
  CHECK_MESSAGE(ev.message.rfind(head, 0) == 0, ev.message);
  CHECK(ev.message.find("test worker: crashing on shard 17") != std::string::npos);
  CHECK((*t)->idle(0));
  CHECK((*t)->worker_pid(0) != 0);
  CHECK((*t)->worker_pid(0) != old_pid);
  CHECK((*t)->worker_pid(1) == other_pid);
  REQUIRE((*t)->Assign(0, TestTask(18, "echo:100")).ok());
  ev = WaitEvent(**t);
  CHECK(ev.kind == TransportEvent::Kind::kDone);
  CHECK(ev.partial == TestPayload(18, 100));
}

// Intent: a death is noticed promptly even while the other workers return a steady stream of
// results (the exit scan is not starved by completions).
TEST_CASE("ShmTransport notices a death amid a stream of results") {
  auto t = ShmTransport::Create(TestWorkerOptions(3));
  REQUIRE_MESSAGE(t.ok(), t.status().message());
  REQUIRE((*t)->Assign(0, TestTask(0, "crash:")).ok());
  const auto start = std::chrono::steady_clock::now();
  uint32_t next = 1;
  int results = 0;
  for (;;) {
    for (int w = 1; w < 3; ++w) {
      if ((*t)->idle(w)) REQUIRE((*t)->Assign(w, TestTask(next++, "echo:4")).ok());
    }
    TransportEvent ev = WaitEvent(**t);
    if (ev.kind == TransportEvent::Kind::kDied) {
      CHECK(ev.worker == 0);
      break;
    }
    ++results;
    REQUIRE(MillisSince(start) < 2000);
  }
  MESSAGE("death seen after ", MillisSince(start), " ms and ", results, " other results");
  CHECK(MillisSince(start) < 1000);
}

// Intent: a SIGKILL from outside (the OOM killer, an operator) is noticed within a second even
// though the worker was asleep in its shard, and later shards still run.
TEST_CASE("ShmTransport notices a worker killed from outside") {
  auto t = ShmTransport::Create(TestWorkerOptions(1));
  REQUIRE_MESSAGE(t.ok(), t.status().message());
  REQUIRE((*t)->Assign(0, TestTask(5, "sleep:20000")).ok());
  std::this_thread::sleep_for(std::chrono::milliseconds(50));
  const int pid = (*t)->worker_pid(0);
  REQUIRE(KillProcess(pid).ok());
  const auto start = std::chrono::steady_clock::now();
  TransportEvent ev = WaitEvent(**t, 3000);
  CHECK(MillisSince(start) < 1000);
  CHECK(ev.kind == TransportEvent::Kind::kDied);
  CHECK(ev.shard == 5);
  CHECK(ev.message.find("killed by signal 9 (SIGKILL)") != std::string::npos);
  REQUIRE((*t)->Assign(0, TestTask(6, "echo:3")).ok());
  ev = WaitEvent(**t);
  CHECK(ev.kind == TransportEvent::Kind::kDone);
  CHECK(ev.partial == TestPayload(6, 3));
}

// Intent: Abort (the coordinator's time limit) kills a busy worker; Wait reports the shard as
// kDied, marked as stopped by the coordinator, and the slot serves again.
TEST_CASE("ShmTransport Abort kills a busy worker and restarts the slot") {
  auto t = ShmTransport::Create(TestWorkerOptions(1));
  REQUIRE_MESSAGE(t.ok(), t.status().message());
  REQUIRE((*t)->Assign(0, TestTask(12, "sleep:20000")).ok());
  const int pid = (*t)->worker_pid(0);
  const auto start = std::chrono::steady_clock::now();
  // Aborted before it starts, a shard would come back as kReturned instead.
  uint32_t shard = 0;
  uint64_t since = 0;
  while (!(*t)->Running(0, &shard, &since) && MillisSince(start) < 500) {
    std::this_thread::sleep_for(std::chrono::milliseconds(1));
  }
  REQUIRE((*t)->Abort(0).ok());
  TransportEvent ev = WaitEvent(**t, 3000);
  CHECK(MillisSince(start) < 1000);
  CHECK(ev.kind == TransportEvent::Kind::kDied);
  CHECK(ev.shard == 12);
  CHECK(ev.message.find("killed by signal 9 (SIGKILL) while processing shard 12 (stopped by the "
                        "coordinator)") != std::string::npos);
  CHECK((*t)->worker_pid(0) != pid);
  REQUIRE((*t)->Assign(0, TestTask(13, "echo:4")).ok());
  ev = WaitEvent(**t);
  CHECK(ev.kind == TransportEvent::Kind::kDone);
  CHECK(ev.partial == TestPayload(13, 4));
  CHECK_FALSE((*t)->Abort(5).ok());
}

// Collects the next n events of t, keyed by shard.
std::map<uint32_t, TransportEvent> EventsByShard(Transport& t, int n) {
  std::map<uint32_t, TransportEvent> got;
  for (int i = 0; i < n; ++i) {
    TransportEvent ev = WaitEvent(t, 3000);
    got[ev.shard] = std::move(ev);
  }
  return got;
}

// Intent: a worker killed with shards queued behind the running one: what it finished stands
// (kDone), the one it had started is kDied, the ones it never started come back as kReturned
// (no attempt spent on them), and the fresh worker of the slot serves again.
TEST_CASE("ShmTransport settles every queued shard of a worker that dies") {
  auto t = ShmTransport::Create(TestWorkerOptions(1));
  REQUIRE_MESSAGE(t.ok(), t.status().message());
  REQUIRE((*t)->Assign(0, TestTask(20, "echo:10")).ok());
  REQUIRE((*t)->Assign(0, TestTask(21, "crash:")).ok());
  REQUIRE((*t)->Assign(0, TestTask(22, "echo:10")).ok());
  REQUIRE((*t)->Assign(0, TestTask(23, "echo:10")).ok());
  std::map<uint32_t, TransportEvent> got = EventsByShard(**t, 4);
  REQUIRE(got.size() == 4);
  CHECK(got[20].kind == TransportEvent::Kind::kDone);
  CHECK(got[20].partial == TestPayload(20, 10));
  CHECK(got[21].kind == TransportEvent::Kind::kDied);
  CHECK_FALSE(got[21].aborted);
  CHECK(got[21].message.find("while processing shard 21") != std::string::npos);
  CHECK(got[21].start_ns >= got[20].end_ns);
  CHECK(got[21].end_ns >= got[21].start_ns);
  CHECK(got[22].kind == TransportEvent::Kind::kReturned);
  CHECK(got[23].kind == TransportEvent::Kind::kReturned);
  CHECK((*t)->idle(0));
  REQUIRE((*t)->Assign(0, TestTask(22, "echo:7")).ok());
  TransportEvent ev = WaitEvent(**t);
  CHECK(ev.kind == TransportEvent::Kind::kDone);
  CHECK(ev.partial == TestPayload(22, 7));
}

// Intent: Abort of a worker with a queue reports the running shard as kDied (aborted) and
// hands the queued one back; nothing is reported twice and the slot is usable at once.
TEST_CASE("ShmTransport Abort returns the shards queued behind the running one") {
  auto t = ShmTransport::Create(TestWorkerOptions(1));
  REQUIRE_MESSAGE(t.ok(), t.status().message());
  REQUIRE((*t)->Assign(0, TestTask(30, "sleep:20000")).ok());
  REQUIRE((*t)->Assign(0, TestTask(31, "echo:4")).ok());
  uint32_t shard = 0;
  uint64_t since = 0;
  const auto start = std::chrono::steady_clock::now();
  while (!(*t)->Running(0, &shard, &since) && MillisSince(start) < 1000) {
    std::this_thread::sleep_for(std::chrono::milliseconds(2));
  }
  REQUIRE((*t)->Abort(0).ok());
  std::map<uint32_t, TransportEvent> got = EventsByShard(**t, 2);
  CHECK(MillisSince(start) < 2000);
  CHECK(got[30].kind == TransportEvent::Kind::kDied);
  CHECK(got[30].aborted);
  CHECK(got[31].kind == TransportEvent::Kind::kReturned);
  TransportEvent none;
  bool extra = true;
  REQUIRE((*t)->Wait(30, &none, &extra).ok());
  CHECK_FALSE(extra);
  CHECK((*t)->room(0) == static_cast<int>(kTaskRingSlots));
}

// Intent: a worker that exits mid-shard is reported with its exit status.
TEST_CASE("ShmTransport reports a worker's exit status") {
  auto t = ShmTransport::Create(TestWorkerOptions(1));
  REQUIRE_MESSAGE(t.ok(), t.status().message());
  REQUIRE((*t)->Assign(0, TestTask(8, "exit:3")).ok());
  TransportEvent ev = WaitEvent(**t, 3000);
  CHECK(ev.kind == TransportEvent::Kind::kDied);
  CHECK(ev.message.find(") exited with status 3 while processing shard 8") != std::string::npos);
  CHECK(ev.message.find("test worker: exiting on shard 8") != std::string::npos);
  CHECK((*t)->idle(0));
}

// Intent: Shutdown removes the segment, which existed with mode 0600 while the transport lived,
// and no worker process outlives it.
TEST_CASE("ShmTransport segment is owner-only and gone after Shutdown") {
  auto t = ShmTransport::Create(TestWorkerOptions(2));
  REQUIRE_MESSAGE(t.ok(), t.status().message());
  const std::string name = (*t)->segment_name();
  CHECK(name.rfind("fanfold-" + std::to_string(CurrentPid()) + "-", 0) == 0);
  struct stat st;
  REQUIRE(::stat(ShmSegment::FilePath(name).c_str(), &st) == 0);
  CHECK((st.st_mode & 0777) == 0600);
  const int pid0 = (*t)->worker_pid(0), pid1 = (*t)->worker_pid(1);
  (*t)->Shutdown();
  CHECK_FALSE(SegmentExists(name));
  CHECK(ShmSegment::ListSegmentsOf(CurrentPid()).empty());
  CHECK_FALSE(ProcessAlive(pid0));
  CHECK_FALSE(ProcessAlive(pid1));
  CHECK_FALSE((*t)->idle(0));
  (*t)->Shutdown();  // idempotent
}

// Intent: Shutdown does not hang on a worker stuck in a long shard: after the grace period it
// is SIGKILLed and reaped.
TEST_CASE("ShmTransport Shutdown kills a worker that does not quit in time") {
  ShmTransportOptions o = TestWorkerOptions(1);
  o.shutdown_grace_ms = 300;
  auto t = ShmTransport::Create(o);
  REQUIRE_MESSAGE(t.ok(), t.status().message());
  REQUIRE((*t)->Assign(0, TestTask(1, "sleep:60000")).ok());
  // Let it start the shard: a quit that arrives first wins over a pending task.
  std::this_thread::sleep_for(std::chrono::milliseconds(50));
  const int pid = (*t)->worker_pid(0);
  const auto start = std::chrono::steady_clock::now();
  (*t)->Shutdown();
  const double ms = MillisSince(start);
  CHECK(ms >= 250);
  CHECK(ms < 2000);
  CHECK_FALSE(ProcessAlive(pid));
}

// Intent: a segment left by a dead coordinator is removed at the next start; one whose
// (live) owner is still running is left alone.
TEST_CASE("ShmTransport::Create removes stale segments of dead coordinators only") {
  const std::string stale = "fanfold-" + std::to_string(DeadPid()) + "-0123456789abcdef";
  const std::string live = "fanfold-1-fedcba9876543210";  // pid 1 always exists
  MakeSegment(stale);
  MakeSegment(live);
  REQUIRE(SegmentExists(stale));
  {
    auto t = ShmTransport::Create(TestWorkerOptions(1));
    REQUIRE_MESSAGE(t.ok(), t.status().message());
  }
  CHECK_FALSE(SegmentExists(stale));
  CHECK(SegmentExists(live));
  bip::shared_memory_object::remove(live.c_str());
}

// Forks a coordinator that starts two workers (optionally turning their
// parent-death signal off first), then SIGKILLs itself. Waits for the
// orphaned workers (re-parented to us) and returns how they ended and how
// long after the coordinator's death; *segment gets the segment it left.
std::vector<ExitInfo> OrphanWorkers(bool without_death_signal, double* ms, std::string* segment) {
  REQUIRE(SetChildSubreaper(true).ok());  // orphaned workers come to us, so we can reap them
  int fds[2];
  REQUIRE(::pipe(fds) == 0);
  pid_t coordinator = ::fork();
  REQUIRE(coordinator >= 0);
  if (coordinator == 0) {
    ::close(fds[0]);
    auto t = ShmTransport::Create(TestWorkerOptions(2));
    if (!t.ok()) ::_exit(1);
    for (int w = 0; w < 2 && without_death_signal; ++w) {
      TransportEvent ev;
      bool got = false;
      if (!(*t)->Assign(w, TestTask(0, "nodeathsignal:")).ok() || !(*t)->Wait(5000, &ev, &got).ok() ||
          !got || ev.partial != "ok") {
        ::_exit(1);
      }
    }
    std::string report = (*t)->segment_name() + " " + std::to_string((*t)->worker_pid(0)) + " " +
                         std::to_string((*t)->worker_pid(1)) + "\n";
    if (::write(fds[1], report.data(), report.size()) != static_cast<ssize_t>(report.size())) ::_exit(1);
    std::raise(SIGKILL);
  }
  ::close(fds[1]);
  char buf[256] = {};
  ssize_t n = ::read(fds[0], buf, sizeof buf - 1);
  ::close(fds[0]);
  Result<ExitInfo> exit = Reap(coordinator);
  REQUIRE(exit.ok());
  CHECK(exit->signaled);
  REQUIRE(n > 0);
  char name[128] = {};
  int pids[2] = {0, 0};
  REQUIRE(std::sscanf(buf, "%127s %d %d", name, &pids[0], &pids[1]) == 3);
  *segment = name;
  std::vector<ExitInfo> ends;
  const auto start = std::chrono::steady_clock::now();
  while (ends.size() < 2 && MillisSince(start) < 3000) {
    for (int& pid : pids) {
      ExitInfo info;
      Result<bool> r = pid > 0 ? TryReap(pid, &info) : Result<bool>(false);
      if (r.ok() && *r) {
        pid = 0;
        ends.push_back(info);
      }
    }
    std::this_thread::sleep_for(std::chrono::milliseconds(2));
  }
  *ms = MillisSince(start);
  for (int pid : pids) {
    if (pid > 0) (void)KillProcess(pid), (void)Reap(pid);  // only if the caller's checks fail
  }
  REQUIRE(SetChildSubreaper(false).ok());
  return ends;
}

// Intent: when the coordinator is SIGKILLed (no cleanup at all), its workers die of the
// parent-death signal at once, and the segment it left is removed by the next start.
TEST_CASE("workers die with a killed coordinator; its segment goes at the next start") {
  double ms = 0;
  std::string name;
  std::vector<ExitInfo> ends = OrphanWorkers(false, &ms, &name);
  MESSAGE("orphaned workers gone after ", ms, " ms");
  REQUIRE(ends.size() == 2);
  CHECK(ms < 2000);
  for (const ExitInfo& e : ends) CHECK(e.Describe() == "was killed by signal 9 (SIGKILL)");
  // The killed coordinator could not remove its segment; the next start
  // does. Any fanfold started meanwhile by a test running beside this one
  // (CTest runs the e2e tests in parallel) is such a start too and may get
  // there first (with the same RemoveStaleSegments); either way it must be
  // gone after a start.
  const bool left = SegmentExists(name);
  std::vector<std::string> removed;
  ShmSegment::RemoveStaleSegments(&removed);
  const bool ours = std::find(removed.begin(), removed.end(), name) != removed.end();
  if (!ours) MESSAGE("segment ", name, " was removed by another process's start before ours (left: ", left, ")");
  CHECK_FALSE(SegmentExists(name));
}

// Intent: without the parent-death signal, the heartbeat check (parent pid re-read every
// 200 ms) still ends orphaned workers within ~2 s, with the "coordinator gone" exit status 3.
TEST_CASE("orphaned workers notice the dead coordinator by heartbeat alone") {
  double ms = 0;
  std::string name;
  std::vector<ExitInfo> ends = OrphanWorkers(true, &ms, &name);
  MESSAGE("orphaned workers (no death signal) gone after ", ms, " ms");
  REQUIRE(ends.size() == 2);
  CHECK(ms < 2000);
  for (const ExitInfo& e : ends) CHECK(e.Describe() == "exited with status 3");
  ShmSegment::RemoveStaleSegments();
  CHECK_FALSE(SegmentExists(name));
}

}  // namespace
}  // namespace fanfold
