// RunManifest: run.json round trips, whatever the paths hold.
#include "coordinator/rundir/run_manifest.h"

#include <doctest/doctest.h>
#include <nlohmann/json.hpp>

namespace fanfold {
namespace {

// Intent: every field survives Encode -> Decode, including paths that need
// JSON escaping and a chunk's byte range; the text is one JSON document
// (nlohmann's parser, an independent reader, accepts it) with one shard a line.
// Intent: a run.json written before `resume` took --attempts / --shard-time-limit reads as 3 and none.
TEST_CASE("run_manifest: older manifests without attempts and time limit") {
  Result<RunManifest> m = DecodeManifest(R"({"fanfold_run": 1, "job": "/j.json", "format": "ndjson",
      "plan": "0123456789abcdef", "plan_text": "x", "created": "2026-12-01T20:40:00Z", "shards": []})", "run.json");
  REQUIRE(m.ok());
  CHECK(m->attempts == 3);
  CHECK(m->shard_time_limit_ms == 0);
}

TEST_CASE("run_manifest: encode and decode round trip") {
  RunManifest m;
  m.job_path = "/jobs/night \"shift\".json";
  m.format = "ndjson";
  m.fingerprint = "0123456789abcdef";
  m.plan_text = "format ndjson\nkeep {/a} > 1\n";
  m.created_utc = "2026-12-01T20:40:00Z";
  m.attempts = 5;
  m.shard_time_limit_ms = 2500;
  m.shards.format = RecordFormat::kNdjson;
  m.shards.shards.resize(3);
  for (uint32_t i = 0; i < 3; ++i) {
    Shard& s = m.shards.shards[i];
    s.index = i;
    s.path = "/logs/d\xc3\xa9p\xc3\xb4t/\\part " + std::to_string(i) + ".ndjson";
    s.file_size = 1000 + i;
    s.mtime_ns = 1764620400123456789LL + i;
    s.compression = i == 0 ? Compression::kZstd : Compression::kNone;
  }
  m.shards.shards[2].offset = 65536;
  m.shards.shards[2].length = 4096;
  const std::string text = EncodeManifest(m);
  CHECK(nlohmann::json::parse(text, nullptr, false).is_object());
  CHECK(std::count(text.begin(), text.end(), '\n') == 16);  // "{", 9 fields, "\"shards\": [", 3 shards, "]", "}"
  Result<RunManifest> back = DecodeManifest(text, "run.json");
  REQUIRE(back.ok());
  CHECK(back->job_path == m.job_path);
  CHECK(back->plan_text == m.plan_text);
  CHECK(back->created_utc == m.created_utc);
  CHECK(back->attempts == 5);
  CHECK(back->shard_time_limit_ms == 2500);
  REQUIRE(back->shards.shards.size() == 3);
  for (uint32_t i = 0; i < 3; ++i) {
    const Shard& a = m.shards.shards[i];
    const Shard& b = back->shards.shards[i];
    CHECK(b.index == a.index);
    CHECK(b.path == a.path);
    CHECK(b.file_size == a.file_size);
    CHECK(b.mtime_ns == a.mtime_ns);
    CHECK(b.compression == a.compression);
    CHECK(b.offset == a.offset);
    CHECK(b.length == a.length);
  }
  CHECK(back->generation == 1);
  CHECK(back->slots == std::vector<uint32_t>{0, 1, 2});  // written out even when they equal the indices
  m.shards.shards.clear();
  Result<RunManifest> empty = DecodeManifest(EncodeManifest(m), "run.json");
  REQUIRE(empty.ok());
  CHECK(empty->shards.shards.empty());
}

// Intent: a refreshed run's slots and generation round trip; slots missing
// from an older run.json mean slot = index; two shards on one slot, or slots
// on some shards only, are refused as a damaged manifest.
TEST_CASE("run_manifest: slots and generation") {
  RunManifest m;
  m.format = "ndjson";
  m.generation = 4;
  m.shards.shards.resize(2);
  m.shards.shards[0].path = "/a";
  m.shards.shards[1].index = 1;
  m.shards.shards[1].path = "/b";
  m.slots = {7, 3};
  Result<RunManifest> back = DecodeManifest(EncodeManifest(m), "run.json");
  REQUIRE(back.ok());
  CHECK(back->generation == 4);
  CHECK(back->slots == std::vector<uint32_t>{7, 3});
  CHECK(back->SlotOf(0) == 7);

  const std::string head = R"({"fanfold_run": 1, "job": "/j.json", "format": "ndjson", "plan": "0123456789abcdef",
      "plan_text": "x", "created": "2026-12-01T20:40:00Z", "shards": [)";
  const std::string a = R"({"index": 0, "path": "/a", "size": 1, "mtime_ns": 2, "compression": "none")";
  const std::string b = R"({"index": 1, "path": "/b", "size": 1, "mtime_ns": 2, "compression": "none")";
  Result<RunManifest> old = DecodeManifest(head + a + "}," + b + "}]}", "run.json");
  REQUIRE(old.ok());
  CHECK(old->slots.empty());
  CHECK(old->AllSlots() == std::vector<uint32_t>{0, 1});
  Result<RunManifest> shared = DecodeManifest(head + a + R"(, "slot": 5},)" + b + R"(, "slot": 5}]})", "run.json");
  REQUIRE(!shared.ok());
  CHECK(shared.status().message().find("two shards share a slot") != std::string::npos);
  Result<RunManifest> mixed = DecodeManifest(head + a + R"(, "slot": 5},)" + b + "}]}", "run.json");
  CHECK(!mixed.ok());
}

}  // namespace
}  // namespace fanfold
