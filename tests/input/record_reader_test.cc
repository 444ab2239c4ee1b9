// RecordReader: one reader serves many shards in a row (NDJSON and CSV),
// each read starting clean — counts, line numbers and samples per shard;
// ReadRecords picks the reader for the format.
#include "common/input/record_reader.h"

#include <doctest/doctest.h>

#include <string>
#include <vector>

namespace fanfold {
namespace {

// Collects the first slot of each record as text ("n:1", "s:x", "-" if missing).
class FirstSlot final : public RecordSink {
 public:
  bool OnRecord(Value* slots) override {
    const Value& v = slots[0];
    if (v.kind == ValueKind::kNumber) seen.push_back("n:" + std::to_string(static_cast<long long>(v.number)));
    else if (v.kind == ValueKind::kString) seen.push_back("s:" + std::string(v.str));
    else seen.push_back("-");
    return true;
  }
  std::vector<std::string> seen;
};

FieldTable OneField(const char* ref) {
  FieldTable t;
  t.InternField(ref);
  return t;
}

// Intent: the second shard's stats and line numbers start from scratch:
// state left by the first (a malformed line, its count) does not leak.
TEST_CASE("record_reader: NDJSON shards in a row read independently") {
  const FieldTable fields = OneField("/k");
  Result<std::unique_ptr<RecordReader>> reader = RecordReader::Create(RecordFormat::kNdjson, fields);
  REQUIRE(reader.ok());

  auto first = MemorySource("{\"k\": 1}\n{oops\n{\"k\": 2}\n");
  FirstSlot sink1;
  ReadStats stats1;
  REQUIRE((*reader)->Read(*first, sink1, &stats1).ok());
  CHECK(sink1.seen == std::vector<std::string>{"n:1", "n:2"});
  CHECK(stats1.records == 2);
  CHECK(stats1.malformed == 1);
  REQUIRE(stats1.samples.size() == 1);
  CHECK(stats1.samples[0].line == 2);

  const std::string second_text = "{\"k\": \"x\"}\n{\"j\": 0}\n";
  auto second = MemorySource(second_text);
  FirstSlot sink2;
  ReadStats stats2;
  REQUIRE((*reader)->Read(*second, sink2, &stats2).ok());
  CHECK(sink2.seen == std::vector<std::string>{"s:x", "-"});
  CHECK(stats2.records == 2);
  CHECK(stats2.malformed == 0);
  CHECK(stats2.samples.empty());
  CHECK(stats2.raw_bytes == second_text.size());  // this shard's bytes only
}

// Intent: a CSV reader re-reads each shard's own header, so columns may sit
// in another order in the next file.
TEST_CASE("record_reader: CSV shards each bring their header") {
  const FieldTable fields = OneField("city");
  Result<std::unique_ptr<RecordReader>> reader = RecordReader::Create(RecordFormat::kCsv, fields);
  REQUIRE(reader.ok());
  auto first = MemorySource("city,n\nOslo,1\n");
  auto second = MemorySource("n,city\n2,Lima\n");
  FirstSlot sink;
  ReadStats s1, s2;
  REQUIRE((*reader)->Read(*first, sink, &s1).ok());
  REQUIRE((*reader)->Read(*second, sink, &s2).ok());
  CHECK(sink.seen == std::vector<std::string>{"s:Oslo", "s:Lima"});
}

// Intent: a referenced column missing from a CSV header is an error of the
// stream, not a malformed record.
TEST_CASE("record_reader: a missing CSV column is an error") {
  const FieldTable fields = OneField("zone");
  auto src = MemorySource("city,n\nOslo,1\n");
  FirstSlot sink;
  ReadStats stats;
  Status s = ReadRecords(RecordFormat::kCsv, *src, fields, sink, &stats);
  REQUIRE_FALSE(s.ok());
  CHECK(s.message().find("zone") != std::string::npos);
}

// Intent: ReadRecords with TSV splits on tabs.
TEST_CASE("record_reader: ReadRecords reads TSV") {
  const FieldTable fields = OneField("b");
  auto src = MemorySource("a\tb\n1\tq\n");
  FirstSlot sink;
  ReadStats stats;
  REQUIRE(ReadRecords(RecordFormat::kTsv, *src, fields, sink, &stats).ok());
  CHECK(sink.seen == std::vector<std::string>{"s:q"});
}

}  // namespace
}  // namespace fanfold
