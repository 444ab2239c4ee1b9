// Tests for FieldSampler: which names and how many records a bounded sample
// of the first shards sees, and that its limits hold. The expected counts
// are counted by hand from the few lines each test writes.
#include "common/input/field_sampler.h"

#include <algorithm>
#include <string>
#include <vector>

#include <doctest/doctest.h>

#include "common/input/byte_source.h"

using namespace fanfold;

namespace {

FieldTable Fields(const std::vector<std::string>& raw) {
  FieldTable t;
  for (const std::string& r : raw) t.InternField(r);
  return t;
}

bool Has(const std::vector<std::string>& names, const std::string& n) {
  return std::find(names.begin(), names.end(), n) != names.end();
}

}  // namespace

// Intent: NDJSON names are the pointers of every member, nested objects and
// the first array items included, RFC 6901-escaped; the present counts say in
// how many records each raw field resolves (null counts, absence does not).
TEST_CASE("field sampler: NDJSON names and present counts") {
  const FieldTable fields = Fields({"/feeder", "/feedr", "/fw/version", "/a~1b", "/r/1", "/gone/deep"});
  FieldSampler s(RecordFormat::kNdjson, fields);
  auto src = MemorySource(
      "{\"feeder\": \"F-1\", \"fw\": {\"version\": \"4.1\"}, \"r\": [1, 2]}\n"
      "{\"feeder\": null, \"a/b\": 3, \"r\": [7]}\r\n"
      "not json at all\n"
      "\n"
      "[1, 2]\n"
      "{\"fw\": 5}");  // no final newline
  REQUIRE(s.AddShard(*src).ok());
  CHECK(s.records() == 3);  // the malformed line, the blank one and the array are no records
  CHECK(s.read_whole());
  CHECK(s.shards() == 1);
  // /feeder: records 1 and 2 (null counts); /feedr: none; /fw/version: record 1
  // (in record 3 /fw is a number); /a~1b: record 2; /r/1: record 1 only.
  CHECK(s.present() == std::vector<uint64_t>{2, 0, 1, 1, 1, 0});
  for (const char* n : {"/feeder", "/fw", "/fw/version", "/r", "/r/0", "/r/1", "/a~1b"}) CHECK(Has(s.names(), n));
  CHECK_FALSE(Has(s.names(), "/feedr"));
}

// Intent: a record holding a number the fast parser refuses (an integer
// beyond 64 bits, 1e400) is a record for the sample too, as it is for the
// reader's second pass; numbers inside strings are left alone.
TEST_CASE("field sampler: records with numbers beyond 64 bits count") {
  const FieldTable fields = Fields({"/id", "/note"});
  FieldSampler s(RecordFormat::kNdjson, fields);
  auto src = MemorySource(
      "{\"id\": 123456789012345678901234567890, \"note\": \"-1e400 \\\" 5\"}\n"
      "{\"id\": 1e400, \"x\": {\"y\": -1e400}}\n"
      "{\"id\": 1}\n");
  REQUIRE(s.AddShard(*src).ok());
  CHECK(s.records() == 3);
  CHECK(s.present() == std::vector<uint64_t>{3, 1});
  CHECK(Has(s.names(), "/x/y"));
}

// Intent: a byte-order mark at the start of a shard is skipped, so the first
// record counts.
TEST_CASE("field sampler: a BOM does not cost the first record") {
  const FieldTable fields = Fields({"/k"});
  FieldSampler s(RecordFormat::kNdjson, fields);
  auto src = MemorySource("\xEF\xBB\xBF{\"k\": 1}\n{\"k\": 2}\n");
  REQUIRE(s.AddShard(*src).ok());
  CHECK(s.records() == 2);
  CHECK(s.present()[0] == 2);
}

// Intent: the record limit holds across shards and makes the sample partial.
TEST_CASE("field sampler: the record limit spans shards") {
  const FieldTable fields = Fields({"/k"});
  SampleLimits limits;
  limits.max_records = 5;
  FieldSampler s(RecordFormat::kNdjson, fields, limits);
  std::string three;
  for (int i = 0; i < 3; ++i) three += "{\"k\": " + std::to_string(i) + "}\n";
  auto a = MemorySource(three);
  REQUIRE(s.AddShard(*a).ok());
  CHECK(s.read_whole());
  CHECK(s.wants_more());
  auto b = MemorySource(three);
  REQUIRE(s.AddShard(*b).ok());
  CHECK(s.records() == 5);
  CHECK_FALSE(s.read_whole());  // the second shard's third record was not read
  CHECK_FALSE(s.wants_more());
}

// Intent: a huge first shard is read only up to the byte limit (plus one
// read), however many records it has.
TEST_CASE("field sampler: the byte limit stops a huge shard") {
  const FieldTable fields = Fields({"/k"});
  SampleLimits limits;
  limits.max_bytes = 100 << 10;
  FieldSampler s(RecordFormat::kNdjson, fields, limits);
  std::string big;
  const std::string line = "{\"k\": \"" + std::string(1000, 'x') + "\"}\n";  // 1,010 bytes
  while (big.size() < (8u << 20)) big += line;
  auto src = MemorySource(big);
  REQUIRE(s.AddShard(*src).ok());
  CHECK_FALSE(s.read_whole());
  CHECK(s.records() > 0);
  CHECK(s.records() * line.size() <= (100u << 10) + (64u << 10));
  CHECK_FALSE(s.wants_more());
}

// Intent: with no time left, no further shard is wanted (the clock bounds
// the sample as well as its size).
TEST_CASE("field sampler: the time limit stops after the first shard") {
  const FieldTable fields = Fields({"/k"});
  SampleLimits limits;
  limits.max_nanos = 0;
  FieldSampler s(RecordFormat::kNdjson, fields, limits);
  CHECK(s.wants_more());
  auto src = MemorySource("{\"k\": 1}\n");
  REQUIRE(s.AddShard(*src).ok());
  CHECK_FALSE(s.wants_more());
}

// Intent: the names kept are bounded, however many members the records have.
TEST_CASE("field sampler: names are bounded") {
  const FieldTable fields = Fields({"/k"});
  SampleLimits limits;
  limits.max_names = 10;
  FieldSampler s(RecordFormat::kNdjson, fields, limits);
  std::string record = "{";
  for (int i = 0; i < 100; ++i) record += (i ? ", " : "") + std::string("\"m") + std::to_string(i) + "\": 1";
  auto src = MemorySource(record + "}\n");
  REQUIRE(s.AddShard(*src).ok());
  CHECK(s.names().size() == 10);
  CHECK(s.names()[0] == "/m0");
}

// Intent: CSV/TSV read only the header (quoted names unquoted); present
// counts the shards whose header has each column; an empty shard has none.
TEST_CASE("field sampler: CSV headers") {
  const FieldTable fields = Fields({"feeder", "a,b", "feedr"});
  FieldSampler s(RecordFormat::kCsv, fields);
  auto a = MemorySource("feeder,\"a,b\",kw\nF-1,2,3\n");
  REQUIRE(s.AddShard(*a).ok());
  CHECK(s.header() == std::vector<std::string>{"feeder", "a,b", "kw"});
  auto b = MemorySource("");
  REQUIRE(s.AddShard(*b).ok());
  CHECK(s.header().empty());
  auto c = MemorySource(
      "\xEF\xBB\xBF"
      "feeder\tx\n");  // a TSV header read as CSV: one column
  REQUIRE(s.AddShard(*c).ok());
  CHECK(s.present() == std::vector<uint64_t>{1, 1, 0});
  CHECK(s.shards() == 3);
  CHECK(Has(s.names(), "kw"));

  FieldSampler t(RecordFormat::kTsv, fields);
  auto d = MemorySource("feeder\tx\n1\t2\n");
  REQUIRE(t.AddShard(*d).ok());
  CHECK(t.header() == std::vector<std::string>{"feeder", "x"});
  CHECK(t.present() == std::vector<uint64_t>{1, 0, 0});
}

// Intent: the last shard the shard limit allows is read, not only opened.
TEST_CASE("field sampler: the shard limit lets its last shard be read") {
  const FieldTable fields = Fields({"/k"});
  SampleLimits limits;
  limits.max_shards = 2;
  FieldSampler s(RecordFormat::kNdjson, fields, limits);
  for (int i = 0; i < 2; ++i) {
    REQUIRE(s.wants_more());
    auto src = MemorySource("{\"k\": 1}\n");
    REQUIRE(s.AddShard(*src).ok());
  }
  CHECK(s.records() == 2);
  CHECK(s.read_whole());
  CHECK_FALSE(s.wants_more());
}
