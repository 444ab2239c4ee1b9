// InProcessTransport: shards run inside Wait on the caller's thread, one per
// call; a worker holds one shard; a shard that cannot be read comes back
// kFailed with the reader's message. Also MakeTransport's --in-process pick.
#include "common/transport/inprocess_transport.h"

#include <doctest/doctest.h>
#include <stdlib.h>

#include <filesystem>
#include <fstream>
#include <string>

#include "common/job/job_loader.h"
#include "common/partial/partial_codec.h"
#include "coordinator/run/transport_factory.h"

namespace fanfold {
namespace {

// A job over two NDJSON files (3 and 1 records) in a fresh /tmp directory.
class TwoFileJob {
 public:
  TwoFileJob() {
    char tmpl[] = "/tmp/fanfold-inproc-XXXXXX";
    dir_ = ::mkdtemp(tmpl);
    Write("job.json", R"({"inputs": {"files": ["*.ndjson"]}, "group": ["{/k}"],
      "measures": [{"name": "n", "fn": "count"}]})");
    Write("a.ndjson", "{\"k\": 1}\n{\"k\": 2}\n{\"k\": 1}\n");
    Write("b.ndjson", "{\"k\": 3}\n");
    Result<LoadedJob> j = LoadJob(dir_ + "/job.json");
    REQUIRE(j.ok());
    job_ = std::move(*j);
  }
  ~TwoFileJob() { std::filesystem::remove_all(dir_); }
  const Plan& plan() const { return *job_.plan; }
  ShardTask Task(uint32_t i) const {
    const Shard& s = job_.shards.shards[i];
    ShardTask t;
    t.index = s.index;
    t.path = s.path;
    return t;
  }

 private:
  void Write(const std::string& name, const std::string& text) const {
    std::ofstream(dir_ + "/" + name, std::ios::binary) << text;
  }
  std::string dir_;
  LoadedJob job_;
};

// Intent: each Wait runs one assigned shard and returns its partial, whose
// header counts the file's lines (3 and 1, as written above).
TEST_CASE("inprocess_transport: shards run one per Wait") {
  TwoFileJob job;
  InProcessTransport t(&job.plan(), 2);
  CHECK(t.worker_count() == 2);
  REQUIRE(t.Assign(0, job.Task(0)).ok());
  REQUIRE(t.Assign(1, job.Task(1)).ok());
  CHECK_FALSE(t.idle(0));
  CHECK(t.room(0) == 0);
  uint64_t records[2] = {0, 0};
  for (int i = 0; i < 2; ++i) {
    TransportEvent ev;
    bool got = false;
    REQUIRE(t.Wait(0, &ev, &got).ok());
    REQUIRE(got);
    CHECK(ev.kind == TransportEvent::Kind::kDone);
    PartialHeader h;
    REQUIRE(DecodePartialHeader(ev.partial, &h).ok());
    CHECK(h.shard_index == ev.shard);
    records[ev.shard] = h.records;
  }
  CHECK(records[0] == 3);
  CHECK(records[1] == 1);
  CHECK(t.idle(0));
  CHECK(t.room(1) == 1);
}

// Intent: nothing assigned, nothing to wait for: got stays false at once.
TEST_CASE("inprocess_transport: an empty Wait returns nothing") {
  TwoFileJob job;
  InProcessTransport t(&job.plan(), 1);
  TransportEvent ev;
  bool got = true;
  REQUIRE(t.Wait(1000, &ev, &got).ok());
  CHECK_FALSE(got);
}

// Intent: a busy or unknown worker takes no shard.
TEST_CASE("inprocess_transport: one shard per worker") {
  TwoFileJob job;
  InProcessTransport t(&job.plan(), 1);
  REQUIRE(t.Assign(0, job.Task(0)).ok());
  CHECK_FALSE(t.Assign(0, job.Task(1)).ok());
  CHECK_FALSE(t.Assign(1, job.Task(1)).ok());
}

// Intent: a file that vanished is the worker's error (kFailed) with the
// reader's message, not a failure of the transport.
TEST_CASE("inprocess_transport: an unreadable shard fails") {
  TwoFileJob job;
  InProcessTransport t(&job.plan(), 1);
  ShardTask task = job.Task(0);
  task.path += ".gone";
  REQUIRE(t.Assign(0, task).ok());
  TransportEvent ev;
  bool got = false;
  REQUIRE(t.Wait(0, &ev, &got).ok());
  REQUIRE(got);
  CHECK(ev.kind == TransportEvent::Kind::kFailed);
  CHECK(ev.message.find(".gone") != std::string::npos);
  CHECK(ev.partial.empty());
}

// Intent: --in-process gives the in-process transport with the workers asked for.
TEST_CASE("transport_factory: --in-process picks the in-process transport") {
  TwoFileJob job;
  RunOptions o;
  o.in_process = true;
  Result<std::unique_ptr<Transport>> t = MakeTransport(job.plan(), o, 3, "/nonexistent-spill");
  REQUIRE(t.ok());
  CHECK(dynamic_cast<InProcessTransport*>(t->get()) != nullptr);
  CHECK((*t)->worker_count() == 3);
}

}  // namespace
}  // namespace fanfold
