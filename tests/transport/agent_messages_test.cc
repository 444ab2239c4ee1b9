// The MPI agent messages as bytes: every kind survives encode/decode, every
// truncation of every kind is refused (never read past the end), and an
// event header refuses a first piece longer than the partial it announces.
#include "common/transport/agent_messages.h"

#include <doctest/doctest.h>

#include <functional>

namespace fanfold {
namespace {

// Every proper prefix of `bytes` must fail to decode.
void EveryPrefixFails(const std::string& bytes, const std::function<Status(const std::string&)>& decode) {
  for (size_t n = 0; n < bytes.size(); ++n) {
    INFO("prefix of " << n << " of " << bytes.size() << " bytes");
    CHECK_FALSE(decode(bytes.substr(0, n)).ok());
  }
}

TEST_CASE("hello round trip and truncation") {
  HelloMessage m;
  m.workers = 3;
  m.spill_dir = "/shared/runs/fw/partials";
  m.worker_args = {"/shared/jobs/fw.json", "ndjson", "52fab64baf59d76f", "/shared/jobs"};
  const std::string bytes = EncodeHello(m);
  HelloMessage back;
  REQUIRE(DecodeHello(bytes, &back).ok());
  CHECK(back.workers == 3);
  CHECK(back.spill_dir == m.spill_dir);
  CHECK(back.worker_args == m.worker_args);
  EveryPrefixFails(bytes, [](const std::string& b) {
    HelloMessage x;
    return DecodeHello(b, &x);
  });
  CHECK_FALSE(DecodeHello(bytes + "x", &back).ok());  // trailing bytes
}

TEST_CASE("task round trip keeps the identity and the byte range") {
  TaskMessage m;
  m.slot = 5;
  m.task.index = 4242;
  m.task.attempt = 2;
  m.task.offset = 1u << 20;
  m.task.length = UINT64_MAX;
  m.task.compression = Compression::kZstd;
  m.task.file_size = 123456789;
  m.task.mtime_ns = -5;  // before the epoch: signed
  m.task.path = "/shared/lamps/lamps-2026-03-01T04.ndjson.zst";
  const std::string bytes = EncodeTask(m);
  TaskMessage back;
  REQUIRE(DecodeTask(bytes, &back).ok());
  CHECK(back.slot == 5);
  CHECK(back.task.index == 4242);
  CHECK(back.task.attempt == 2);
  CHECK(back.task.offset == (1u << 20));
  CHECK(back.task.length == UINT64_MAX);
  CHECK(back.task.compression == Compression::kZstd);
  CHECK(back.task.file_size == 123456789);
  CHECK(back.task.mtime_ns == -5);
  CHECK(back.task.path == m.task.path);
  EveryPrefixFails(bytes, [](const std::string& b) {
    TaskMessage x;
    return DecodeTask(b, &x);
  });
}

TEST_CASE("ready, failed, started and abort round trips") {
  ReadyMessage ready;
  REQUIRE(DecodeReady(EncodeReady({4, "node7"}), &ready).ok());
  CHECK(ready.workers == 4);
  CHECK(ready.host == "node7");
  FailedMessage failed;
  REQUIRE(DecodeFailed(EncodeFailed({"node7", "no worker could start"}), &failed).ok());
  CHECK(failed.host == "node7");
  CHECK(failed.message == "no worker could start");
  StartedMessage started;
  REQUIRE(DecodeStarted(EncodeStarted({1, 77, 1780000000123456789ull}), &started).ok());
  CHECK(started.slot == 1);
  CHECK(started.shard == 77);
  CHECK(started.since_ns == 1780000000123456789ull);
  uint32_t slot = 0;
  REQUIRE(DecodeSlot(EncodeSlot(9), &slot).ok());
  CHECK(slot == 9);
  EveryPrefixFails(EncodeStarted({1, 77, 5}), [](const std::string& b) {
    StartedMessage x;
    return DecodeStarted(b, &x);
  });
  EveryPrefixFails(EncodeReady({4, "node7"}), [](const std::string& b) {
    ReadyMessage x;
    return DecodeReady(b, &x);
  });
}

TEST_CASE("event header: fields, total length and where the first piece starts") {
  TransportEvent ev;
  ev.kind = TransportEvent::Kind::kDied;
  ev.shard = 12;
  ev.aborted = true;
  ev.start_ns = 100;
  ev.end_ns = 250;
  ev.message = "killed by SIGKILL";
  ev.partial = std::string(1000, 'p');
  std::string bytes = EncodeEventHeader(3, ev);
  const size_t header = bytes.size();
  bytes += ev.partial.substr(0, 400);  // the first piece
  uint32_t slot = 0;
  TransportEvent back;
  uint64_t total = 0;
  size_t at = 0;
  REQUIRE(DecodeEventHeader(bytes, &slot, &back, &total, &at).ok());
  CHECK(slot == 3);
  CHECK(back.kind == TransportEvent::Kind::kDied);
  CHECK(back.shard == 12);
  CHECK(back.aborted);
  CHECK(back.start_ns == 100);
  CHECK(back.end_ns == 250);
  CHECK(back.message == "killed by SIGKILL");
  CHECK(back.partial.empty());
  CHECK(total == 1000);
  CHECK(at == header);
  // A first piece longer than the whole partial is refused.
  std::string too_long = EncodeEventHeader(3, TransportEvent{}) + "x";
  CHECK_FALSE(DecodeEventHeader(too_long, &slot, &back, &total, &at).ok());
  // An unknown kind is refused.
  std::string bad_kind = EncodeEventHeader(3, ev);
  bad_kind[0] = 9;
  CHECK_FALSE(DecodeEventHeader(bad_kind, &slot, &back, &total, &at).ok());
  EveryPrefixFails(EncodeEventHeader(3, ev), [](const std::string& b) {
    uint32_t s = 0;
    TransportEvent x;
    uint64_t t = 0;
    size_t h = 0;
    return DecodeEventHeader(b, &s, &x, &t, &h);
  });
}

}  // namespace
}  // namespace fanfold
