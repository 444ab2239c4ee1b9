// MemoryBudget: where the cap comes from (flag, job, default), its shares,
// and the refusal of a cap too small for the job's merge.
#include "coordinator/run/memory_budget.h"

#include <doctest/doctest.h>

#include <algorithm>
#include <string>

#include "common/job/job_spec.h"
#include "common/port/process_control.h"

namespace fanfold {
namespace {

std::unique_ptr<Plan> PlanWith(const std::string& extra, int measures) {
  std::string list;
  for (int i = 0; i < measures; ++i) list += std::string(i ? "," : "") + "{\"name\": \"n" + std::to_string(i) + "\", \"fn\": \"count\"}";
  const std::string job = R"({"inputs": {"files": ["x.ndjson"]}, "group": ["{/k}"], "measures": [)" + list + "]" +
                          extra + "}";
  Result<JobSpec> spec = ParseJobSpec(job, "job.json");
  REQUIRE(spec.ok());
  Result<std::unique_ptr<Plan>> plan = CompilePlan(std::move(*spec), RecordFormat::kNdjson);
  REQUIRE(plan.ok());
  return std::move(*plan);
}

// Intent: the shares are half, a quarter and a quarter, and never exceed the cap.
TEST_CASE("memory budget: shares of the cap") {
  const MemoryShares s = SplitMemoryCap(uint64_t{1} << 30);
  CHECK(s.merge_bytes == uint64_t{1} << 29);
  CHECK(s.sort_bytes == uint64_t{1} << 28);
  CHECK(s.worker_table_bytes == uint64_t{1} << 28);
  const MemoryShares odd = SplitMemoryCap(1001);
  CHECK(odd.merge_bytes + odd.sort_bytes + odd.worker_table_bytes <= 1001);
}

// Intent: the flag wins over the job's "memory_cap", which wins over the
// default; the cap is not part of the plan's fingerprint.
TEST_CASE("memory budget: flag, then job, then default") {
  const auto plain = PlanWith("", 2);
  const auto capped = PlanWith(R"(, "memory_cap": "64MiB")", 2);
  CHECK(plain->fingerprint == capped->fingerprint);
  Result<MemoryShares> s = ResolveMemoryCap(uint64_t{32} << 20, *capped);
  REQUIRE(s.ok());
  CHECK(s->cap == uint64_t{32} << 20);
  CHECK(s->source == "--memory-cap");
  s = ResolveMemoryCap(0, *capped);
  REQUIRE(s.ok());
  CHECK(s->cap == uint64_t{64} << 20);
  s = ResolveMemoryCap(0, *plain);
  REQUIRE(s.ok());
  CHECK(s->cap >= MinimumMemoryCap(*plain, 1));
  CHECK(s->cap == std::max(DefaultMemoryCap(), MinimumMemoryCap(*plain, 1)));
}

// Intent: the default is a quarter of the available memory, never past the
// ceiling (what keeps the coordinator flat as groups grow) nor, on a
// machine that does not say, past it either.
TEST_CASE("memory budget: the default cap has a ceiling") {
  const uint64_t available = AvailableMemoryBytes();
  const uint64_t expected = std::min(available == 0 ? kFallbackCap : available / 4, kDefaultCapCeiling);
  CHECK(DefaultMemoryCap() == expected);
  CHECK(DefaultMemoryCap() <= uint64_t{128} << 20);
  const auto plain = PlanWith("", 2);
  Result<MemoryShares> s = ResolveMemoryCap(0, *plain);
  REQUIRE(s.ok());
  CHECK(s->source == "the default (a quarter of the available memory, at most 128 MiB)");
}

// Intent: the least workable cap grows with measures and key ranges, and a
// smaller one is refused naming where it came from and the least that works.
TEST_CASE("memory budget: a cap too small for the merge is refused") {
  const auto two = PlanWith("", 2);
  const auto nine = PlanWith("", 9);
  CHECK(MinimumMemoryCap(*nine, 1) > MinimumMemoryCap(*two, 1));
  CHECK(MinimumMemoryCap(*two, 3) > MinimumMemoryCap(*two, 1));
  const uint64_t least = MinimumMemoryCap(*two, 1);
  CHECK(ResolveMemoryCap(least, *two).ok());
  Result<MemoryShares> s = ResolveMemoryCap(least - 1, *two);
  REQUIRE_FALSE(s.ok());
  CHECK(s.status().code() == Status::Code::kInvalidArgument);
  CHECK(s.status().message().find("--memory-cap") != std::string::npos);
  CHECK(s.status().message().find("expected at least " + std::to_string(least)) != std::string::npos);
  const auto tiny = PlanWith(R"(, "memory_cap": 1000)", 2);
  s = ResolveMemoryCap(0, *tiny);
  REQUIRE_FALSE(s.ok());
  CHECK(s.status().message().find("job.json: /memory_cap") != std::string::npos);
}

// Intent: the job file's key takes an integer or a byte-count string and
// refuses anything else, naming /memory_cap.
TEST_CASE("memory budget: the job file's memory_cap") {
  for (const char* bad : {R"("lots")", "0", "-1", "1.5", "true", R"("1.5GiB")", "[1]"}) {
    CAPTURE(bad);
    const std::string job = std::string(R"({"inputs": {"files": ["x"]}, "measures": [{"name": "n", "fn": "count"}],
      "memory_cap": )") + bad + "}";
    Result<JobSpec> spec = ParseJobSpec(job, "job.json");
    REQUIRE_FALSE(spec.ok());
    CHECK(spec.status().message().find("/memory_cap") != std::string::npos);
    CHECK(spec.status().message().find("byte count") != std::string::npos);
  }
  Result<JobSpec> spec = ParseJobSpec(R"({"inputs": {"files": ["x"]}, "measures": [{"name": "n", "fn": "count"}],
      "memory_cap": 123456789})", "job.json");
  REQUIRE(spec.ok());
  CHECK(spec->memory_cap == 123456789u);
}

}  // namespace
}  // namespace fanfold
