// ShardScheduler (DispatchOrder): largest shard first, ties by index, a
// chunk counted by its length, small shards last in index order; the
// test-only reorder switch.
#include "coordinator/run/shard_scheduler.h"

#include <doctest/doctest.h>
#include <stdlib.h>

#include <algorithm>
#include <string>
#include <vector>

namespace fanfold {
namespace {

constexpr const char* kSwitch = "FANFOLD_TEST_ONLY_DISPATCH";

// Sets the test-only switch for one scope and restores "unset" after.
class SwitchGuard {
 public:
  explicit SwitchGuard(const char* value) { ::setenv(kSwitch, value, 1); }
  ~SwitchGuard() { ::unsetenv(kSwitch); }
};

std::vector<Shard> Sized(const std::vector<uint64_t>& sizes) {
  std::vector<Shard> shards;
  for (size_t i = 0; i < sizes.size(); ++i) {
    Shard s;
    s.index = static_cast<uint32_t>(i);
    s.file_size = sizes[i];
    shards.push_back(s);
  }
  return shards;
}

constexpr uint64_t kMiB = uint64_t{1} << 20;

// Sizes given in MiB (all at or above the small-shard bound).
std::vector<Shard> SizedMiB(const std::vector<uint64_t>& mib) {
  std::vector<uint64_t> bytes;
  for (uint64_t m : mib) bytes.push_back(m * kMiB);
  return Sized(bytes);
}

std::vector<uint32_t> Order(const std::vector<Shard>& shards, int workers = 2) {
  Result<std::vector<uint32_t>> r = DispatchOrder(shards, workers);
  REQUIRE(r.ok());
  return *r;
}

// Intent: longest-processing-time first (Graham 1969): bytes descending.
TEST_CASE("shard_scheduler: largest shard first") {
  ::unsetenv(kSwitch);
  CHECK(Order(SizedMiB({10, 500, 30, 7000, 2})) == std::vector<uint32_t>{3, 1, 2, 0, 4});
}

// Intent: shards under kSmallShardBytes go after the big ones, in index
// order whatever their sizes (the merge folds partials in index order).
TEST_CASE("shard_scheduler: small shards go last, in index order") {
  ::unsetenv(kSwitch);
  CHECK(kSmallShardBytes == kMiB);
  CHECK(Order(Sized({900, 3 * kMiB, 1200, kMiB - 1, 40, kMiB, 2 * kMiB})) ==
        std::vector<uint32_t>{1, 6, 5, 0, 2, 3, 4});
  CHECK(Order(Sized({1068, 977, 1203, 1001})) == std::vector<uint32_t>{0, 1, 2, 3});
}

// Intent: one worker has nothing to balance: index order, so partials
// reach the merge (which folds in shard order) in the order it takes them.
TEST_CASE("shard_scheduler: one worker goes in index order") {
  ::unsetenv(kSwitch);
  CHECK(Order(Sized({10, 500, 30, 7000, 2}), 1) == std::vector<uint32_t>{0, 1, 2, 3, 4});
  SwitchGuard guard("reverse");
  CHECK(Order(Sized({10, 500, 30, 7000, 2}), 1) == std::vector<uint32_t>{4, 3, 2, 1, 0});
}

// Intent: equal sizes keep index order, so the order is the same on every run.
TEST_CASE("shard_scheduler: ties go by shard index") {
  ::unsetenv(kSwitch);
  CHECK(Order(SizedMiB({5, 9, 5, 9, 5})) == std::vector<uint32_t>{1, 3, 0, 2, 4});
}

// Intent: a chunk of a file weighs its length, not the whole file's size.
TEST_CASE("shard_scheduler: chunks count their own length") {
  ::unsetenv(kSwitch);
  std::vector<Shard> shards = SizedMiB({1000, 1000, 300});
  shards[0].offset = 0;
  shards[0].length = 100 * kMiB;  // a 100 MiB chunk of a 1000 MiB file
  CHECK(Order(shards) == std::vector<uint32_t>{1, 2, 0});
}

// Intent: no shards, no order; never an error.
TEST_CASE("shard_scheduler: an empty list") {
  ::unsetenv(kSwitch);
  CHECK(Order({}).empty());
}

// Intent: "reverse" turns the largest-first order around.
TEST_CASE("shard_scheduler: the reverse switch") {
  SwitchGuard guard("reverse");
  CHECK(Order(SizedMiB({10, 500, 30, 7000, 2})) == std::vector<uint32_t>{4, 0, 2, 1, 3});
}

// Intent: "shuffle:SEED" is a Fisher-Yates shuffle driven by splitmix64
// (Steele, Lea & Flood 2014) of the largest-first order; the expected
// orders come from a Python re-implementation of both (equal sizes, so
// the starting order is 0..5).
TEST_CASE("shard_scheduler: the shuffle switch is seeded and reproducible") {
  const std::vector<Shard> shards = Sized({1, 1, 1, 1, 1, 1});
  {
    SwitchGuard guard("shuffle:42");
    CHECK(Order(shards) == std::vector<uint32_t>{4, 3, 0, 2, 5, 1});
  }
  {
    SwitchGuard guard("shuffle:7");
    CHECK(Order(shards) == std::vector<uint32_t>{1, 5, 0, 2, 4, 3});
  }
}

// Intent: a malformed switch is refused with a message that quotes it.
TEST_CASE("shard_scheduler: a malformed switch is an error") {
  for (const char* bad : {"shuffle:", "shuffle:12x", "sideways"}) {
    SwitchGuard guard(bad);
    Result<std::vector<uint32_t>> r = DispatchOrder(Sized({1, 2}), 2);
    REQUIRE_FALSE(r.ok());
    CHECK(r.status().message().find(std::string("found '") + bad + "'") != std::string::npos);
  }
}

}  // namespace
}  // namespace fanfold
