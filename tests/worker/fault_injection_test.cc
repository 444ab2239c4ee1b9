// FaultPlan: parsing FANFOLD_TEST_ONLY_FAULTS (kinds, keys, defaults, the
// "inject:" guard, refusals) and the corrupt hook. The crash, exit and stall
// hooks end or block the process; the e2e crash tests exercise them.
#include "worker/fault_injection.h"

#include <doctest/doctest.h>
#include <stdlib.h>

#include <string>

namespace fanfold {
namespace {

// Intent: every kind and key parses, with the documented defaults (attempt
// 0 = any, after 0, stall forever, exit code 1).
TEST_CASE("fault_injection: a full plan parses") {
  Result<FaultPlan> p =
      FaultPlan::Parse("inject:crash:shard=3,attempt=1,after=100;stall:shard=5;exit:shard=2,code=70;corrupt:shard=0");
  REQUIRE(p.ok());
  const auto& f = p->faults();
  REQUIRE(f.size() == 4);
  CHECK(f[0].kind == FaultPlan::Kind::kCrash);
  CHECK(f[0].shard == 3);
  CHECK(f[0].attempt == 1);
  CHECK(f[0].after == 100);
  CHECK(f[1].kind == FaultPlan::Kind::kStall);
  CHECK(f[1].ms == -1);
  CHECK(f[1].attempt == 0);
  CHECK(f[2].kind == FaultPlan::Kind::kExit);
  CHECK(f[2].code == 70);
  CHECK(f[3].kind == FaultPlan::Kind::kCorrupt);
  CHECK(f[3].after == 0);
}

// Intent: malformed values are refused with the reason and the whole text.
TEST_CASE("fault_injection: malformed plans are refused") {
  const std::pair<const char*, const char*> cases[] = {
      {"crash:shard=1", "expected the value to start with 'inject:'"},
      {"inject:explode:shard=1", "unknown fault kind 'explode'"},
      {"inject:crash:shard=x", "expected key=integer, found 'shard=x'"},
      {"inject:crash:attempt=1", "has no shard="},
      {"inject:crash:shard=1,color=2", "unknown key 'color'"},
  };
  for (const auto& [text, why] : cases) {
    Result<FaultPlan> p = FaultPlan::Parse(text);
    REQUIRE_FALSE(p.ok());
    CHECK(p.status().message().find(why) != std::string::npos);
    CHECK(p.status().message().find(std::string("in '") + text + "'") != std::string::npos);
  }
}

// Intent: unset or empty variable means no faults at all.
TEST_CASE("fault_injection: no variable, no faults") {
  ::unsetenv("FANFOLD_TEST_ONLY_FAULTS");
  Result<FaultPlan> p = FaultPlan::FromEnvironment();
  REQUIRE(p.ok());
  CHECK(p->faults().empty());
}

// Intent: corrupt flips one bit (0x10) of the middle byte, only for the
// matching shard and attempt, and leaves an empty partial alone.
TEST_CASE("fault_injection: corrupt flips one bit of the matching shard's partial") {
  Result<FaultPlan> p = FaultPlan::Parse("inject:corrupt:shard=2,attempt=1");
  REQUIRE(p.ok());
  ShardTask task;
  task.index = 2;
  task.attempt = 1;
  std::string partial = "abcde";
  p->OnFinish(task, &partial);
  CHECK(partial == std::string("ab") + static_cast<char>('c' ^ 0x10) + "de");
  std::string untouched = "abcde";
  task.attempt = 2;
  p->OnFinish(task, &untouched);
  CHECK(untouched == "abcde");
  task.attempt = 1;
  task.index = 3;
  p->OnFinish(task, &untouched);
  CHECK(untouched == "abcde");
  std::string empty;
  task.index = 2;
  p->OnFinish(task, &empty);
  CHECK(empty.empty());
}

// Intent: hooks for shards without a fault (or past `after`) do nothing.
TEST_CASE("fault_injection: non-matching hooks are harmless") {
  Result<FaultPlan> p = FaultPlan::Parse("inject:crash:shard=9,after=5");
  REQUIRE(p.ok());
  ShardTask task;
  task.index = 1;
  p->OnStart(task);
  p->OnRecord(task, 5);
  task.index = 9;
  p->OnRecord(task, 4);  // the crash waits for record 5
  CHECK(p->faults().size() == 1);
}

}  // namespace
}  // namespace fanfold
