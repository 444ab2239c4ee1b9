// RunSummary: the stderr lines a run ends with.
#include "coordinator/run/run_summary.h"

#include <doctest/doctest.h>

namespace fanfold {
namespace {

// Intent: a malformed record in a whole file is named by file and line; one
// in a later chunk of a cut file says which chunk its line counts from,
// since the reader cannot know how many lines came before the chunk.
TEST_CASE("run_summary: malformed samples name the file, the chunk and the line") {
  ShardList list;
  list.shards.resize(2);
  list.shards[0].path = "/logs/a.ndjson";
  list.shards[1].path = "/logs/a.ndjson";
  list.shards[1].offset = 65536;
  list.shards[1].length = 65536;
  RunSummary s;
  s.shards_total = 2;
  s.samples.push_back({0, MalformedSample{7, "the line is not a JSON object"}});
  s.samples.push_back({1, MalformedSample{3, "the line is not a JSON object"}});
  s.samples.push_back({0, MalformedSample{9, "column 4: expected ':' after the key \"k\", found '1'"}});
  std::vector<std::string> lines = FormatRunSummary(s, list);
  REQUIRE(lines.size() == 4);
  // A reason with its column reads as one place: "line 9, column 4".
  CHECK(lines[2] == "malformed record: /logs/a.ndjson line 9, column 4: expected ':' after the key \"k\", found '1'");
  lines.erase(lines.begin() + 2);
  CHECK(lines[0] == "malformed record: /logs/a.ndjson line 7: the line is not a JSON object");
  CHECK(lines[1] == "malformed record: /logs/a.ndjson (the chunk from byte 65536) line 3: the line is not a JSON object");
  CHECK(lines[2].rfind("0 of 2 shards done, 0 failed", 0) == 0);
}

// Intent: an interrupted run counts the shards saved in the run directory
// (21 committed, though only 2 could be merged in shard order), and labels
// the record totals as those of the merged shards.
TEST_CASE("run_summary: an interrupted run counts what is saved") {
  ShardList list;
  list.shards.resize(64);
  RunSummary s;
  s.shards_total = 64;
  s.interrupted = true;
  s.shards_saved = 21;
  s.totals.shards_merged = 2;
  s.totals.records = 1500;
  const std::vector<std::string> lines = FormatRunSummary(s, list);
  REQUIRE(lines.size() == 1);
  CHECK(lines[0].rfind("21 of 64 shards saved, 0 failed (interrupted) | merged so far: 2 shards, records: 1,500 read",
                       0) == 0);
}

// Intent: a resumed run counts the shards it reused apart from those it
// processed, and its MB/s is over the processed shards' bytes alone
// (8.4 MB in 0.5 s = 16.8 MB/s; all 25.6 MB over 0.5 s would say 51.2).
TEST_CASE("run_summary: a resume counts reused shards apart and rates the processed ones") {
  ShardList list;
  list.shards.resize(64);
  RunSummary s;
  s.shards_total = 64;
  s.shards_reused = 21;
  s.processed = {43, 86'000, 1'000'000, 8'400'000};
  s.totals.shards_merged = 64;
  s.totals.records = 128'000;
  s.totals.raw_bytes = 25'600'000;
  s.totals.compressed_bytes = 3'200'000;
  s.wall_seconds = 0.5;
  const std::vector<std::string> lines = FormatRunSummary(s, list);
  REQUIRE(lines.size() == 1);
  CHECK(lines[0] ==
        "64 of 64 shards done (21 reused from the run directory, 43 processed), 0 failed | records: 128,000 read, 0 "
        "kept, 0 malformed | 3.2 MB in, 25.6 MB decompressed | processed: 8.4 MB decompressed in 0.50 s, 16.8 MB/s");
  // Intent: a resume with nothing left to do gives no rate at all.
  RunSummary all_reused = s;
  all_reused.shards_reused = 64;
  all_reused.processed = {};
  CHECK(FormatRunSummary(all_reused, list)[0].find("(64 reused from the run directory, 0 processed), 0 failed |") !=
        std::string::npos);
  CHECK(FormatRunSummary(all_reused, list)[0].find("| nothing processed, 0.50 s") != std::string::npos);
  // Intent: interrupted, the saved count says the same split.
  s.interrupted = true;
  s.shards_saved = 30;
  s.processed.shards = 9;
  CHECK(FormatRunSummary(s, list)[0].rfind("30 of 64 shards saved (21 reused from the run directory, 9 processed), "
                                           "0 failed (interrupted) | merged so far: 64 shards,",
                                           0) == 0);
}

// Intent: without reuse the line keeps its form, its rate over the processed bytes.
TEST_CASE("run_summary: a run without reuse keeps its line") {
  ShardList list;
  list.shards.resize(2);
  RunSummary s;
  s.shards_total = 2;
  s.processed = {2, 10, 1'000'000, 4'000'000};
  s.totals.shards_merged = 2;
  s.totals.raw_bytes = 4'000'000;
  s.totals.compressed_bytes = 1'000'000;
  s.wall_seconds = 2;
  CHECK(FormatRunSummary(s, list)[0] == "2 of 2 shards done, 0 failed | records: 0 read, 0 kept, 0 malformed | "
                                        "1.0 MB in, 4.0 MB decompressed | 2.00 s, 2.0 MB/s");
}

// Intent: numbers are grouped by thousands and bytes given in decimal MB.
TEST_CASE("run_summary: number formats") {
  CHECK(GroupedInteger(0) == "0");
  CHECK(GroupedInteger(1234567) == "1,234,567");
  CHECK(Megabytes(12'345'678) == "12.3 MB");
}

}  // namespace
}  // namespace fanfold
