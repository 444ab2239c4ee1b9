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

// Intent: numbers are grouped by thousands and bytes given in decimal MB.
TEST_CASE("run_summary: number formats") {
  CHECK(GroupedInteger(0) == "0");
  CHECK(GroupedInteger(1234567) == "1,234,567");
  CHECK(Megabytes(12'345'678) == "12.3 MB");
}

}  // namespace
}  // namespace fanfold
