// WorkerLoop pieces outside the normal handoff: argv parsing, and a worker
// refusing a bad segment or slot (the test worker binary run directly). The
// handoff itself is exercised through ShmTransport (shm_transport_test.cc).
#include "common/transport/worker_loop.h"

#include <doctest/doctest.h>

#include "common/port/process_spawner.h"
#include "common/transport/shm_layout.h"
#include "common/port/shm_segment.h"
#include "tests/transport/shm_transport_test_util.h"

namespace fanfold {
namespace {

// Runs the test worker with argv and returns it after it exited.
std::unique_ptr<ChildProcess> RunTestWorker(const std::vector<std::string>& args) {
  SpawnOptions o;
  o.executable = FANFOLD_TEST_WORKER;
  o.args = args;
  auto c = ChildProcess::Spawn(o);
  REQUIRE_MESSAGE(c.ok(), c.status().message());
  REQUIRE((*c)->WaitExit(5000));
  return std::move(c).value();
}

// Intent: the transport's argv convention parses, extra arguments are kept in order, and
// malformed command lines are refused.
TEST_CASE("ParseWorkerLaunch") {
  const char* good[] = {"w", "--segment", "fanfold-1-0123456789abcdef", "--slot", "3", "job.json", "-v"};
  auto l = ParseWorkerLaunch(7, good);
  REQUIRE(l.ok());
  CHECK(l->segment == "fanfold-1-0123456789abcdef");
  CHECK(l->slot == 3);
  CHECK(l->extra == std::vector<std::string>{"job.json", "-v"});
  const char* bad_slot[] = {"w", "--segment", "s", "--slot", "3x"};
  CHECK_FALSE(ParseWorkerLaunch(5, bad_slot).ok());
  const char* negative[] = {"w", "--segment", "s", "--slot", "-1"};
  CHECK_FALSE(ParseWorkerLaunch(5, negative).ok());
  const char* swapped[] = {"w", "--slot", "1", "--segment", "s"};
  CHECK_FALSE(ParseWorkerLaunch(5, swapped).ok());
  const char* short_argv[] = {"w", "--segment", "s"};
  CHECK_FALSE(ParseWorkerLaunch(3, short_argv).ok());
}

// Intent: a worker pointed at a segment that does not exist exits with an error naming it.
TEST_CASE("RunWorkerLoop refuses a missing segment") {
  auto c = RunTestWorker({kSegmentFlag, "fanfold-1-0000000000000000", kSlotFlag, "0"});
  CHECK(c->exit_info().code == 4);
  CHECK(c->LastOutput().find("cannot open shared memory segment 'fanfold-1-0000000000000000'") !=
        std::string::npos);
}

// Intent: a worker checks the segment's version and its slot number before serving.
TEST_CASE("RunWorkerLoop refuses a wrong version or slot") {
  auto g = ShmGeometry::Make(1, 4096);
  REQUIRE(g.ok());
  auto seg = ShmSegment::Create(g->total_bytes());
  REQUIRE(seg.ok());
  auto view = ShmView::Initialize((*seg)->data(), (*seg)->size(), *g, CurrentPid(), "");
  REQUIRE(view.ok());
  auto c = RunTestWorker({kSegmentFlag, (*seg)->name(), kSlotFlag, "1"});
  CHECK(c->exit_info().code == 4);
  CHECK(c->LastOutput().find("worker slot 1 out of range; the run has 1 workers") != std::string::npos);
  view->header().version = kShmVersion + 7;
  c = RunTestWorker({kSegmentFlag, (*seg)->name(), kSlotFlag, "0"});
  CHECK(c->exit_info().code == 4);
  CHECK(c->LastOutput().find("layout version " + std::to_string(kShmVersion + 7)) != std::string::npos);
  view->header().version = kShmVersion;
  view->Destroy();
}

}  // namespace
}  // namespace fanfold
