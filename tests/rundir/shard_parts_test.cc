// Shard parts (coordinator/rundir/shard_parts.h): --part text parsing, the
// byte-balanced contiguous cut (checked against the rule its header states,
// computed here independently with exact integer arithmetic), and the shard
// list digest's sensitivity to each identity field; run.json's part fields
// read back.
#include <cstdint>
#include <string>
#include <vector>

#include <doctest/doctest.h>

#include "coordinator/rundir/run_manifest.h"
#include "coordinator/rundir/shard_parts.h"

namespace fanfold {
namespace {

ShardList ListOfSizes(const std::vector<uint64_t>& sizes) {
  ShardList list;
  for (size_t i = 0; i < sizes.size(); ++i) {
    Shard s;
    s.index = static_cast<uint32_t>(i);
    s.path = "/lamps/h" + std::to_string(i) + ".ndjson";
    s.file_size = sizes[i];
    list.shards.push_back(s);
  }
  return list;
}

// The part of each shard by the header's rule: floor(N (2C + w) / 2W) + 1.
std::vector<uint32_t> PartsByRule(const std::vector<uint64_t>& sizes, uint32_t n) {
  uint64_t total = 0;
  for (uint64_t s : sizes) total += s + 1;
  std::vector<uint32_t> out;
  uint64_t before = 0;
  for (uint64_t s : sizes) {
    uint64_t p = n * (2 * before + s + 1) / (2 * total);
    out.push_back(static_cast<uint32_t>(std::min<uint64_t>(p, n - 1) + 1));
    before += s + 1;
  }
  return out;
}

}  // namespace

TEST_CASE("--part parses I/N, 1-based, and refuses the rest") {
  Result<PartNumber> p = ParsePartNumber("2/7", "--part");
  REQUIRE(p.ok());
  CHECK(p->number == 2);
  CHECK(p->count == 7);
  CHECK(ParsePartNumber("1/1", "--part").ok());
  for (const char* bad : {"0/3", "4/3", "1/0", "", "3", "a/3", "1/b", "-1/3", "1/3/4", " 1/3", "+1/3", "1/100001"}) {
    CAPTURE(bad);
    Result<PartNumber> r = ParsePartNumber(bad, "--part");
    REQUIRE(!r.ok());
    CHECK(r.status().message().find("--part '") == 0);
  }
  CHECK(ParsePartNumber("0/3", "--part").status().message().find("numbered from 1") != std::string::npos);
}

TEST_CASE("parts are contiguous, cover the list once and follow the byte rule") {
  const std::vector<std::vector<uint64_t>> cases = {
      {100, 100, 100, 100, 100, 100, 100, 100, 100, 100},
      {1000, 1, 1, 1, 1, 1, 1, 1},
      {0, 0, 0, 0, 0},
      {5, 900, 3, 70, 70, 70, 1, 4000, 12},
      {},
  };
  for (const auto& sizes : cases) {
    const ShardList list = ListOfSizes(sizes);
    for (uint32_t n : {1u, 2u, 3u, 7u, 20u}) {
      CAPTURE(n);
      const std::vector<uint32_t> rule = PartsByRule(sizes, n);
      uint32_t next = 0;
      for (uint32_t i = 1; i <= n; ++i) {
        uint32_t first = 0, end = 0;
        PartRange(list, PartNumber{i, n}, &first, &end);
        CHECK(first == next);
        CHECK(end >= first);
        for (uint32_t k = first; k < end; ++k) CHECK(rule[k] == i);
        next = end;
      }
      CHECK(next == sizes.size());
    }
  }
  // Ten equal shards in three parts: 3, 4, 3 (midpoints at 5%, 15%, ...).
  const ShardList ten = ListOfSizes(std::vector<uint64_t>(10, 100));
  uint32_t first = 0, end = 0;
  PartRange(ten, PartNumber{2, 3}, &first, &end);
  CHECK(first == 3);
  CHECK(end == 7);
}

TEST_CASE("the shard list digest changes with every identity field") {
  const ShardList base = ListOfSizes({10, 20, 30});
  const std::string d = ShardListDigest(base);
  CHECK(d.size() == 16);
  CHECK(ShardListDigest(base) == d);
  ShardList l = base;
  l.shards[1].mtime_ns = 1;
  CHECK(ShardListDigest(l) != d);
  l = base;
  l.shards[2].file_size = 31;
  CHECK(ShardListDigest(l) != d);
  l = base;
  l.shards[0].path += "x";
  CHECK(ShardListDigest(l) != d);
  l = base;
  l.shards[0].offset = 0;
  l.shards[0].length = 5;
  CHECK(ShardListDigest(l) != d);
  l = base;
  l.shards.pop_back();
  CHECK(ShardListDigest(l) != d);
}

TEST_CASE("run.json keeps a part's fields; a whole run has none") {
  RunManifest m;
  m.job_path = "/lamps/job.json";
  m.format = "ndjson";
  m.fingerprint = "0123456789abcdef";
  m.plan_text = "fanfold-plan codec=4\n";
  m.created_utc = "2026-12-01T17:00:00Z";
  m.shards = ListOfSizes({10, 20});
  const std::string whole = EncodeManifest(m);
  CHECK(whole.find("\"part\"") == std::string::npos);
  m.part = PartOfRun{2, 5, 40, 100, "00000000deadbeef"};
  Result<RunManifest> back = DecodeManifest(EncodeManifest(m), "run.json");
  REQUIRE(back.ok());
  CHECK(back->part.number == 2);
  CHECK(back->part.count == 5);
  CHECK(back->part.first_shard == 40);
  CHECK(back->part.total_shards == 100);
  CHECK(back->part.list_digest == "00000000deadbeef");
  Result<RunManifest> plain = DecodeManifest(whole, "run.json");
  REQUIRE(plain.ok());
  CHECK(plain->part.number == 0);
}

}  // namespace fanfold
