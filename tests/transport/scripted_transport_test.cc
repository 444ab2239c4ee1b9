// ScriptedTransport keeps the Transport contract the run loop relies on
// (transport.h): one shard at a time per worker, in order; a death reports
// the running shard kDied and those queued behind it kReturned; a fresh
// worker takes the slot; Abort marks the death aborted.
#include "tests/transport/scripted_transport.h"

#include <doctest/doctest.h>

#include <string>
#include <vector>

namespace fanfold {
namespace {

ShardTask Task(uint32_t shard, uint32_t attempt = 1) {
  ShardTask t;
  t.index = shard;
  t.attempt = attempt;
  return t;
}

std::vector<TransportEvent> Drain(ScriptedTransport& t) {
  std::vector<TransportEvent> out;
  for (;;) {
    TransportEvent ev;
    bool got = false;
    REQUIRE(t.Wait(0, &ev, &got).ok());
    if (!got) return out;
    out.push_back(ev);
  }
}

std::string PartialText(uint32_t shard) { return "partial-" + std::to_string(shard); }

// Intent: a worker answers its queue in assignment order, and room counts what it holds.
TEST_CASE("scripted_transport: answers in order") {
  ScriptedTransport t(1, 3, PartialText);
  CHECK(t.room(0) == 3);
  for (uint32_t s : {5u, 2u, 9u}) REQUIRE(t.Assign(0, Task(s)).ok());
  CHECK(t.room(0) == 0);
  CHECK_FALSE(t.Assign(0, Task(1)).ok());
  uint32_t running = 0;
  uint64_t since = 0;
  REQUIRE(t.Running(0, &running, &since));
  CHECK(running == 5);
  const auto events = Drain(t);
  REQUIRE(events.size() == 3);
  CHECK(events[0].shard == 5);
  CHECK(events[1].shard == 2);
  CHECK(events[2].shard == 9);
  CHECK(events[2].partial == "partial-9");
  CHECK(t.idle(0));
}

// Intent: a kill reports the running shard died and the queued ones returned,
// then a new generation serves the slot.
TEST_CASE("scripted_transport: a death returns the queue") {
  ScriptedTransport t(1, 3, PartialText);
  t.On(1, 1, ScriptStep::Kill("boom"));
  for (uint32_t s : {1u, 2u, 3u}) REQUIRE(t.Assign(0, Task(s)).ok());
  const auto events = Drain(t);
  REQUIRE(events.size() == 3);
  CHECK(events[0].kind == TransportEvent::Kind::kDied);
  CHECK(events[0].message == "boom");
  CHECK_FALSE(events[0].aborted);
  CHECK(events[1].kind == TransportEvent::Kind::kReturned);
  CHECK(events[2].kind == TransportEvent::Kind::kReturned);
  CHECK(t.generation(0) == 1);
  REQUIRE(t.Assign(0, Task(2)).ok());
  CHECK(t.assignments().back().generation == 1);
}

// Intent: Abort of a dropped shard is an aborted death; the step is used up.
TEST_CASE("scripted_transport: abort ends a dropped shard") {
  ScriptedTransport t(1, 1, PartialText);
  t.On(4, 1, ScriptStep::Drop());
  REQUIRE(t.Assign(0, Task(4)).ok());
  CHECK(Drain(t).empty());
  REQUIRE(t.Abort(0).ok());
  const auto events = Drain(t);
  REQUIRE(events.size() == 1);
  CHECK(events[0].kind == TransportEvent::Kind::kDied);
  CHECK(events[0].aborted);
  REQUIRE(t.Assign(0, Task(4)).ok());  // the same attempt again now answers
  const auto again = Drain(t);
  REQUIRE(again.size() == 1);
  CHECK(again[0].kind == TransportEvent::Kind::kDone);
}

// Intent: corrupt changes exactly the last byte; fail carries its message;
// the script applies per attempt.
TEST_CASE("scripted_transport: corrupt, fail and attempts") {
  ScriptedTransport t(2, 1, PartialText);
  t.On(0, 1, ScriptStep::Corrupt());
  t.On(1, 2, ScriptStep::Fail("bad line"));
  REQUIRE(t.Assign(0, Task(0)).ok());
  REQUIRE(t.Assign(1, Task(1, 2)).ok());
  const auto events = Drain(t);
  REQUIRE(events.size() == 2);
  CHECK(events[0].partial.size() == PartialText(0).size());
  CHECK(events[0].partial.substr(0, events[0].partial.size() - 1) == "partial-");
  CHECK(events[0].partial.back() != '0');
  CHECK(events[1].kind == TransportEvent::Kind::kFailed);
  CHECK(events[1].message == "bad line");
}

}  // namespace
}  // namespace fanfold
