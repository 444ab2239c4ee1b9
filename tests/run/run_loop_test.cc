// RunLoop (RunShards) driven through ScriptedTransport: retries on a fresh
// worker, the default of three attempts, quarantine with its reason, the
// per-shard time limit, queued shards of a dead worker handed back without
// counting, corrupt partials retried, and a result merged in shard order
// whatever order the shards finish in. No processes, no run directory.
#include "coordinator/run/run_loop.h"

#include <doctest/doctest.h>

#include <chrono>
#include <string>
#include <vector>

#include "common/job/job_spec.h"
#include "common/partial/group_key.h"
#include "tests/transport/scripted_transport.h"

namespace fanfold {
namespace {

using Outcome = AttemptRecord::Outcome;

// One group; `n` counts records, `latest` is `at_highest` of the shard's number by
// a constant key, so the value kept is that of the last shard merged.
std::unique_ptr<Plan> LoopPlan() {
  const char* job = R"({"inputs": {"files": ["x.ndjson"]}, "group": ["{/k}"],
    "measures": [{"name": "n", "fn": "count"}, {"name": "latest", "fn": "at_highest", "of": "{/v}", "by": "{/t}"}]})";
  Result<JobSpec> spec = ParseJobSpec(job, "loop.json");
  REQUIRE(spec.ok());
  Result<std::unique_ptr<Plan>> plan = CompilePlan(std::move(*spec), RecordFormat::kNdjson);
  REQUIRE(plan.ok());
  return std::move(*plan);
}

// Shard s read 1 record (k = 0, v = s, t = 0).
std::string ShardPartial(const Plan& plan, uint32_t shard) {
  std::vector<MeasureConfig> configs;
  for (const auto& m : plan.reductions[0].measures) configs.push_back(m.config);
  PartialState p(&configs);
  p.header.fingerprint = plan.fingerprint;
  p.header.shard_index = shard;
  p.header.records = 1;
  p.header.kept = 1;
  std::string key;
  AppendKeyValue(Value::Number(0), &key);
  MeasureState* const* states = p.reductions[0].groups.FindOrAdd(key);
  const Value none[1] = {Value::Number(0)};
  const Value value_and_key[2] = {Value::Number(static_cast<double>(shard)), Value::Number(0)};
  states[0]->Add(none);
  states[1]->Add(value_and_key);
  std::string out;
  EncodePartial(p, &out);
  return out;
}

ShardList Shards(uint32_t n) {
  ShardList list;
  for (uint32_t i = 0; i < n; ++i) {
    Shard s;
    s.index = i;
    s.path = "/data/part-" + std::to_string(i) + ".ndjson";
    s.file_size = 100;
    list.shards.push_back(s);
  }
  return list;
}

std::vector<uint32_t> InOrder(uint32_t n) {
  std::vector<uint32_t> order;
  for (uint32_t i = 0; i < n; ++i) order.push_back(i);
  return order;
}

// Everything one RunShards call needs, with the attempts and persisted
// partials it reported.
struct Harness {
  explicit Harness(uint32_t shards, int workers = 2, int room = 1)
      : plan(LoopPlan()),
        list(Shards(shards)),
        transport(workers, room, [this](uint32_t s) { return ShardPartial(*plan, s); }),
        merger(plan.get(), shards) {
    options.on_attempt = [this](const AttemptRecord& r) { attempts.push_back(r); };
    options.on_partial = [this](uint32_t s, const std::string&) {
      persisted.push_back(s);
      return Status::Ok();
    };
  }
  Status Run() { return RunShards(list, InOrder(static_cast<uint32_t>(list.shards.size())), transport, merger, options, &result); }
  std::vector<AttemptRecord> AttemptsOf(uint32_t shard) const {
    std::vector<AttemptRecord> out;
    for (const AttemptRecord& r : attempts)
      if (r.shard == shard) out.push_back(r);
    return out;
  }
  std::vector<ScriptedTransport::Assignment> AssignmentsOf(uint32_t shard) const {
    std::vector<ScriptedTransport::Assignment> out;
    for (const auto& a : transport.assignments())
      if (a.task.index == shard) out.push_back(a);
    return out;
  }

  std::unique_ptr<Plan> plan;
  ShardList list;
  ScriptedTransport transport;
  Merger merger;
  RunLoopOptions options;
  RunLoopResult result;
  std::vector<AttemptRecord> attempts;
  std::vector<uint32_t> persisted;
};

// The result's one row: count, then the `at_highest` value.
std::pair<int64_t, double> Row(Merger& merger) {
  Result<OutputTable> t = merger.Finish(0);
  REQUIRE(t.ok());
  REQUIRE(t->rows.size() == 1);
  return {t->rows[0][1].integer, t->rows[0][2].number};
}

// Intent: with nothing scripted every shard is one done attempt, persisted
// before it is merged, and the run is complete with no failure or retry.
TEST_CASE("run_loop: every shard answers once") {
  Harness h(5);
  REQUIRE(h.Run().ok());
  CHECK(h.result.failures.empty());
  CHECK(h.result.retries == 0);
  CHECK_FALSE(h.result.interrupted);
  REQUIRE(h.attempts.size() == 5);
  for (const AttemptRecord& r : h.attempts) {
    CHECK(r.outcome == Outcome::kDone);
    CHECK(r.attempt == 1);
    CHECK(r.final);
    CHECK(r.header.records == 1);  // the header the worker wrote travels with the attempt
  }
  CHECK(h.persisted.size() == 5);
  REQUIRE(h.merger.complete());
  CHECK(Row(h.merger).first == 5);  // 5 shards of 1 record each
}

// Intent: a worker that dies running a shard costs one attempt; the shard's
// second attempt goes to a fresh worker (another slot or a new incarnation).
TEST_CASE("run_loop: a shard whose worker died is retried on a fresh worker") {
  Harness h(4);
  h.transport.On(2, 1, ScriptStep::Kill("worker exited with signal 9"));
  REQUIRE(h.Run().ok());
  const auto tries = h.AttemptsOf(2);
  REQUIRE(tries.size() == 2);
  CHECK(tries[0].outcome == Outcome::kDied);
  CHECK(tries[0].message == "worker exited with signal 9");
  CHECK_FALSE(tries[0].final);
  CHECK(tries[1].outcome == Outcome::kDone);
  CHECK(tries[1].attempt == 2);
  CHECK(tries[1].final);
  const auto given = h.AssignmentsOf(2);
  REQUIRE(given.size() == 2);
  CHECK(given[1].task.attempt == 2);
  const bool same_worker = given[0].worker == given[1].worker && given[0].generation == given[1].generation;
  CHECK_FALSE(same_worker);
  CHECK(h.result.retries == 1);
  CHECK(h.result.failures.empty());
  CHECK(Row(h.merger).first == 4);
}

// Intent: by default a shard gets three attempts (the CLI's documented
// "--attempts" default); after the third death it is quarantined, the
// reason naming the count and the last death, and the rest of the run goes on.
TEST_CASE("run_loop: quarantine after the default three attempts") {
  Harness h(3);
  CHECK(h.options.max_attempts == 3);
  for (uint32_t a = 1; a <= 4; ++a) h.transport.On(1, a, ScriptStep::Kill("worker exited with code 70"));
  REQUIRE(h.Run().ok());
  CHECK(h.AssignmentsOf(1).size() == 3);  // never a fourth
  const auto tries = h.AttemptsOf(1);
  REQUIRE(tries.size() == 3);
  CHECK_FALSE(tries[0].final);
  CHECK_FALSE(tries[1].final);
  CHECK(tries[2].final);
  REQUIRE(h.result.failures.size() == 1);
  const ShardFailure& f = h.result.failures[0];
  CHECK(f.shard == 1);
  CHECK(f.path == "/data/part-1.ndjson");
  CHECK(f.attempts == 3);
  CHECK(f.message == "quarantined after 3 attempts; last: worker exited with code 70");
  CHECK(h.result.retries == 2);
  REQUIRE(h.merger.complete());
  CHECK(Row(h.merger).first == 2);  // shards 0 and 2 only
}

// Intent: max_attempts is honoured as given: with one attempt a single
// death quarantines the shard.
TEST_CASE("run_loop: one attempt allowed means no retry") {
  Harness h(2);
  h.options.max_attempts = 1;
  h.transport.On(0, 1, ScriptStep::Kill("worker exited with signal 11"));
  REQUIRE(h.Run().ok());
  REQUIRE(h.result.failures.size() == 1);
  CHECK(h.result.failures[0].message == "quarantined after 1 attempts; last: worker exited with signal 11");
  CHECK(h.result.retries == 0);
  CHECK(h.AssignmentsOf(0).size() == 1);
}

// Intent: a shard the worker rejects (bad data) fails at once with the
// worker's own message: the same input would fail again.
TEST_CASE("run_loop: a worker's error fails the shard without retry") {
  Harness h(3);
  h.transport.On(0, 1, ScriptStep::Fail("line 7: not JSON"));
  REQUIRE(h.Run().ok());
  REQUIRE(h.result.failures.size() == 1);
  CHECK(h.result.failures[0].message == "line 7: not JSON");
  CHECK(h.result.failures[0].attempts == 1);
  CHECK(h.result.retries == 0);
  const auto tries = h.AttemptsOf(0);
  REQUIRE(tries.size() == 1);
  CHECK(tries[0].outcome == Outcome::kFailed);
  CHECK(tries[0].final);
}

// Intent: a partial that fails its checksum is a failed attempt like a
// crash — retried, and never handed to on_partial (nothing corrupt is persisted).
TEST_CASE("run_loop: a corrupt partial is a failed attempt and is retried") {
  Harness h(3);
  h.transport.On(1, 1, ScriptStep::Corrupt());
  REQUIRE(h.Run().ok());
  const auto tries = h.AttemptsOf(1);
  REQUIRE(tries.size() == 2);
  CHECK(tries[0].outcome == Outcome::kRejected);
  CHECK(tries[0].message.rfind("its partial state was rejected: ", 0) == 0);
  CHECK_FALSE(tries[0].final);
  CHECK(tries[1].outcome == Outcome::kDone);
  int persisted_1 = 0;
  for (uint32_t s : h.persisted) persisted_1 += s == 1;
  CHECK(persisted_1 == 1);  // only the good second partial
  CHECK(h.result.failures.empty());
  CHECK(Row(h.merger).first == 3);
}

// Intent: corrupt on every attempt quarantines like deaths do, and the
// reason keeps the rejection's words.
TEST_CASE("run_loop: a partial corrupt every time is quarantined") {
  Harness h(1, 1);
  for (uint32_t a = 1; a <= 3; ++a) h.transport.On(0, a, ScriptStep::Corrupt());
  REQUIRE(h.Run().ok());
  REQUIRE(h.result.failures.size() == 1);
  CHECK(h.result.failures[0].message.rfind("quarantined after 3 attempts; last: its partial state was rejected: ", 0) ==
        0);
  CHECK(h.persisted.empty());
}

// Intent: when a worker dies, the shards queued behind its running one come
// back uncounted: no attempt record, the same attempt number on reassignment,
// and no retry charged; only the running shard's death counts.
TEST_CASE("run_loop: queued shards of a dead worker come back uncounted") {
  Harness h(3, /*workers=*/1, /*room=*/3);
  h.transport.On(0, 1, ScriptStep::Kill("worker exited with signal 9"));
  REQUIRE(h.Run().ok());
  // All three went to the one worker at once, behind each other.
  REQUIRE(h.transport.assignments().size() >= 3);
  for (int i = 0; i < 3; ++i) CHECK(h.transport.assignments()[static_cast<size_t>(i)].generation == 0);
  for (uint32_t s : {1u, 2u}) {
    const auto given = h.AssignmentsOf(s);
    REQUIRE(given.size() == 2);
    CHECK(given[1].task.attempt == 1);  // handed back, not retried
    CHECK(given[1].generation == 1);    // to the fresh worker
    const auto tries = h.AttemptsOf(s);
    REQUIRE(tries.size() == 1);
    CHECK(tries[0].attempt == 1);
    CHECK(tries[0].outcome == Outcome::kDone);
  }
  int returned = 0;
  for (const TransportEvent& e : h.transport.delivered()) returned += e.kind == TransportEvent::Kind::kReturned;
  CHECK(returned == 2);
  CHECK(h.result.retries == 1);
  CHECK(h.AttemptsOf(0).size() == 2);
  CHECK(Row(h.merger).first == 3);
}

// Intent: a shard handed back by a live worker is not an attempt either.
TEST_CASE("run_loop: a handed-back shard is queued again without an attempt") {
  Harness h(2);
  h.transport.On(1, 1, ScriptStep::HandBack());
  REQUIRE(h.Run().ok());
  const auto given = h.AssignmentsOf(1);
  REQUIRE(given.size() == 2);
  CHECK(given[1].task.attempt == 1);
  REQUIRE(h.AttemptsOf(1).size() == 1);
  CHECK(h.result.retries == 0);
  CHECK(Row(h.merger).first == 2);
}

// Intent: a shard that never answers is killed once past the per-shard time
// limit, recorded as timed out with the limit in its message, and retried.
TEST_CASE("run_loop: the per-shard time limit kills and retries a hung shard") {
  Harness h(3);
  h.options.shard_time_limit_ms = 30;
  h.transport.On(2, 1, ScriptStep::Drop());
  const auto t0 = std::chrono::steady_clock::now();
  REQUIRE(h.Run().ok());
  CHECK(std::chrono::steady_clock::now() - t0 < std::chrono::seconds(20));
  REQUIRE(h.transport.aborts().size() == 1);
  const auto tries = h.AttemptsOf(2);
  REQUIRE(tries.size() == 2);
  CHECK(tries[0].outcome == Outcome::kTimedOut);
  CHECK(tries[0].message == "exceeded the per-shard time limit of 30 ms and was killed");
  CHECK_FALSE(tries[0].final);
  CHECK(tries[0].end_ns - tries[0].start_ns >= 30'000'000);  // it ran past the limit before the kill
  CHECK(tries[1].outcome == Outcome::kDone);
  CHECK(h.result.failures.empty());
}

// Intent: a shard that hangs on every attempt is quarantined after the
// last, the reason saying it timed out.
TEST_CASE("run_loop: a shard over the time limit every time is quarantined") {
  Harness h(2);
  h.options.shard_time_limit_ms = 20;
  h.options.max_attempts = 2;
  h.transport.On(0, 1, ScriptStep::Drop());
  h.transport.On(0, 2, ScriptStep::Drop());
  REQUIRE(h.Run().ok());
  CHECK(h.transport.aborts().size() == 2);
  REQUIRE(h.result.failures.size() == 1);
  CHECK(h.result.failures[0].message ==
        "quarantined after 2 attempts; last: exceeded the per-shard time limit of 20 ms and was killed");
}

// Intent: a slow shard within its limit is left alone.
TEST_CASE("run_loop: a shard under the time limit is not killed") {
  Harness h(2);
  h.options.shard_time_limit_ms = 10'000;
  h.transport.On(0, 1, ScriptStep::Delay(40));
  REQUIRE(h.Run().ok());
  CHECK(h.transport.aborts().empty());
  REQUIRE(h.AttemptsOf(0).size() == 1);
  CHECK(h.AttemptsOf(0)[0].outcome == Outcome::kDone);
}

// Intent: shards that finish in reverse order still merge in shard order:
// `at_highest` keeps the highest shard's value (3), as it would reading the
// inputs one after another; merged in arrival order it would be 0.
TEST_CASE("run_loop: results merge in shard order whatever the completion order") {
  Harness h(4, /*workers=*/4);
  h.transport.On(0, 1, ScriptStep::Delay(90));
  h.transport.On(1, 1, ScriptStep::Delay(60));
  h.transport.On(2, 1, ScriptStep::Delay(30));
  REQUIRE(h.Run().ok());
  std::vector<uint32_t> finished;
  for (const TransportEvent& e : h.transport.delivered()) finished.push_back(e.shard);
  CHECK(finished == std::vector<uint32_t>{3, 2, 1, 0});  // the script really reversed them
  const auto [count, latest] = Row(h.merger);
  CHECK(count == 4);
  CHECK(latest == 3.0);
}

// Intent: shards are handed out in the order given, not by index.
TEST_CASE("run_loop: dispatch follows the given order") {
  Harness h(4, /*workers=*/1);
  const std::vector<uint32_t> order = {2, 0, 3, 1};
  REQUIRE(RunShards(h.list, order, h.transport, h.merger, h.options, &h.result).ok());
  std::vector<uint32_t> given;
  for (const auto& a : h.transport.assignments()) given.push_back(a.task.index);
  CHECK(given == order);
}

// Intent: should_stop ends the loop early and says so; nothing is failed.
TEST_CASE("run_loop: should_stop interrupts the run") {
  Harness h(4, /*workers=*/1);
  h.options.should_stop = [&h] { return h.attempts.size() >= 2; };
  REQUIRE(h.Run().ok());
  CHECK(h.result.interrupted);
  CHECK(h.attempts.size() == 2);
  CHECK(h.result.failures.empty());
  CHECK_FALSE(h.merger.complete());
}

// Intent: a storage error from on_partial stops the run with that error.
TEST_CASE("run_loop: an on_partial error stops the run") {
  Harness h(3);
  h.options.on_partial = [](uint32_t s, const std::string&) {
    return s == 1 ? Status::IoError("disk full") : Status::Ok();
  };
  Status s = h.Run();
  REQUIRE_FALSE(s.ok());
  CHECK(s.message() == "disk full");
}

// Intent: a hand-out that fails ends the run, but only after the partial
// the worker just returned is persisted and its attempt recorded: finished
// work is never lost to a later shard's error (the worker takes its next
// shard before its partial is persisted, run_loop.cc).
TEST_CASE("run_loop: a failed hand-out keeps the partial just returned") {
  Harness h(3, /*workers=*/1);
  h.transport.RefuseAssign(1);
  Status s = h.Run();
  REQUIRE_FALSE(s.ok());
  CHECK(s.message().find("shard 1 cannot be sent") != std::string::npos);
  REQUIRE(h.persisted.size() == 1);
  CHECK(h.persisted[0] == 0);
  REQUIRE(h.attempts.size() == 1);
  CHECK(h.attempts[0].shard == 0);
  CHECK(h.attempts[0].outcome == Outcome::kDone);
}

}  // namespace
}  // namespace fanfold
