// Tests for the partial-state codec: round trips, and that corrupt or hostile
// bytes are rejected with an error instead of a crash.
#include <doctest/doctest.h>

#include <random>

#include "common/partial/group_key.h"
#include "common/partial/partial_codec.h"

using namespace fanfold;

namespace {
std::vector<MeasureConfig> Configs() {
  MeasureConfig count;
  count.kind = MeasureKind::kCount;
  MeasureConfig sum;
  sum.kind = MeasureKind::kSum;
  MeasureConfig top;
  top.kind = MeasureKind::kTop;
  top.k = 2;
  return {count, sum, top};
}

void Fill(PartialState* p) {
  p->header.fingerprint = 0x1234;
  p->header.shard_index = 7;
  p->header.records = 100;
  p->header.kept = 90;
  p->header.malformed = 2;
  p->header.path_hash = PathHash("/x/y.ndjson");
  p->samples.push_back({12, "unclosed string"});
  p->field_present = {98, 0, uint64_t{1} << 40};
  p->lookup_unmatched = {5, 0, uint64_t{1} << 33};
  for (int i = 0; i < 50; ++i) {
    std::string key;
    AppendKeyValue(Value::String(i % 2 ? "odd" : "even"), &key);
    AppendKeyValue(Value::Number(i % 5), &key);
    MeasureState* const* s = p->reductions[0].groups.FindOrAdd(key);
    Value args[1] = {Value::Number(i * 0.5)};
    s[0]->Add(nullptr);
    s[1]->Add(args);
    s[2]->Add(args);
  }
}
}  // namespace

TEST_CASE("encode, decode, re-encode gives the same bytes") {
  // Intent: the codec loses nothing and is deterministic.
  auto configs = Configs();
  PartialState p(&configs);
  Fill(&p);
  std::string a;
  EncodePartial(p, &a);
  PartialState q(&configs);
  REQUIRE(DecodePartial(a, &q).ok());
  CHECK(q.header.shard_index == 7);
  CHECK(q.header.records == 100);
  CHECK(q.header.malformed == 2);
  CHECK(q.samples.size() == 1);
  CHECK(q.samples[0].line == 12);
  CHECK(q.field_present == std::vector<uint64_t>{98, 0, uint64_t{1} << 40});
  CHECK(q.lookup_unmatched == std::vector<uint64_t>{5, 0, uint64_t{1} << 33});
  CHECK(q.reductions[0].groups.group_count() == 10);
  std::string b;
  EncodePartial(q, &b);
  CHECK(a == b);
}

TEST_CASE("every single-bit flip is detected") {
  // Intent: the XXH3 checksum covers header and body, so no flip goes unnoticed.
  auto configs = Configs();
  PartialState p(&configs);
  Fill(&p);
  std::string a;
  EncodePartial(p, &a);
  for (size_t byte = 0; byte < a.size(); ++byte) {
    for (int bit = 0; bit < 8; bit += 3) {
      std::string c = a;
      c[byte] = static_cast<char>(c[byte] ^ (1 << bit));
      PartialState q(&configs);
      CHECK(!DecodePartial(c, &q).ok());
    }
  }
}

TEST_CASE("truncated and random inputs give errors, not crashes") {
  // Intent: bounds-checked decoding of hostile input.
  auto configs = Configs();
  PartialState p(&configs);
  Fill(&p);
  std::string a;
  EncodePartial(p, &a);
  for (size_t n = 0; n < a.size(); n += 7) {
    PartialState q(&configs);
    CHECK(!DecodePartial(std::string_view(a).substr(0, n), &q).ok());
  }
  std::mt19937_64 rng(42);
  for (int i = 0; i < 500; ++i) {
    std::string junk(rng() % 400, '\0');
    for (char& c : junk) c = static_cast<char>(rng());
    if (junk.size() >= 4) junk.replace(0, 4, "FFPS");
    PartialState q(&configs);
    CHECK(!DecodePartial(junk, &q).ok());
  }
}

TEST_CASE("group keys round trip and order as documented") {
  // Intent: null < bool < number < string in output order; -0 groups with +0.
  std::string k1, k2;
  AppendKeyValue(Value::Number(-0.0), &k1);
  AppendKeyValue(Value::Number(0.0), &k2);
  CHECK(k1 == k2);
  std::string key;
  AppendKeyValue(Value::Missing(), &key);
  AppendKeyValue(Value::Bool(true), &key);
  AppendKeyValue(Value::Number(2.5), &key);
  AppendKeyValue(Value::String("z"), &key);
  std::vector<Cell> cells;
  REQUIRE(DecodeKey(key, 4, &cells).ok());
  CHECK(cells[0].kind == Cell::Kind::kNull);
  CHECK(cells[1].boolean);
  CHECK(cells[2].number == 2.5);
  CHECK(cells[3].str == "z");
  CHECK(CompareCells(cells[0], cells[1]) < 0);
  CHECK(CompareCells(cells[1], cells[2]) < 0);
  CHECK(CompareCells(cells[2], cells[3]) < 0);
  std::vector<Cell> bad;
  CHECK(!DecodeKey(key.substr(0, key.size() - 1), 4, &bad).ok());
}

TEST_CASE("small bodies are stored raw, large ones compressed, both decode alike") {
  // Intent: flag bit 0 (offset 20) marks a body stored without zstd; a body
  // under 4 KiB is stored so, a larger one compressed; the flag's rules
  // (lengths equal, no other bits) are enforced even past the checksum.
  auto configs = Configs();
  PartialState small(&configs);
  Fill(&small);
  std::string a;
  EncodePartial(small, &a);
  PartialHeader h;
  REQUIRE(DecodePartialHeader(a, &h).ok());
  CHECK(h.flags == 1);
  PartialState big(&configs);
  Fill(&big);
  for (int i = 0; i < 3000; ++i) {
    std::string key;
    AppendKeyValue(Value::Number(1000 + i), &key);
    big.reductions[0].groups.FindOrAdd(key)[0]->Add(nullptr);
  }
  std::string b;
  EncodePartial(big, &b);
  REQUIRE(DecodePartialHeader(b, &h).ok());
  CHECK(h.flags == 0);
  for (const std::string* bytes : {&a, &b}) {
    PartialState q(&configs);
    REQUIRE(DecodePartial(*bytes, &q).ok());
    std::string again;
    EncodePartial(q, &again);
    CHECK(again == *bytes);
  }
  // Unknown flag bits, and a raw body whose two lengths differ, are corrupt
  // even with a checksum recomputed over them (SetPartialEncodeTime reseals).
  std::string unknown = a;
  unknown[20] = 3;
  SetPartialEncodeTime(0, &unknown);
  CHECK(DecodePartialHeader(unknown, &h).code() == Status::Code::kCorrupt);
  std::string lengths = a;
  lengths[104] = static_cast<char>(lengths[104] + 1);
  SetPartialEncodeTime(0, &lengths);
  CHECK(DecodePartialHeader(lengths, &h).message() == "partial state body is stored raw but its two lengths differ");
  // A partial of format version 2 (before exact integers), resealed so only
  // the version is wrong, is refused by name of both versions.
  std::string old_version = a;
  old_version[4] = 2;
  old_version[5] = 0;
  SetPartialEncodeTime(0, &old_version);
  const Status refused = DecodePartialHeader(old_version, &h);
  CHECK(refused.code() == Status::Code::kCorrupt);
  CHECK(refused.message() == "partial state format version 2; this fanfold reads version 4 only");
}

TEST_CASE("a partial carries every reduction's kept count and group table, in order") {
  // Intent: two reductions with their own measures round-trip (encode → decode
  // → re-encode, same bytes), and a partial of another reduction count is refused
  // as corrupt rather than merged into the wrong tables.
  auto first = Configs();
  std::vector<MeasureConfig> second(1);
  second[0].kind = MeasureKind::kCount;
  PartialState p({&first, &second});
  Fill(&p);
  p.reductions[0].kept = 90;
  p.reductions[1].kept = 3;
  for (const char* k : {"a", "b", "c"}) {
    std::string key;
    AppendKeyValue(Value::String(k), &key);
    p.reductions[1].groups.FindOrAdd(key)[0]->Add(nullptr);
  }
  std::string a;
  EncodePartial(p, &a);
  PartialState q({&first, &second});
  REQUIRE(DecodePartial(a, &q).ok());
  CHECK(q.reductions[0].kept == 90);
  CHECK(q.reductions[1].kept == 3);
  CHECK(q.reductions[0].groups.group_count() == 10);
  CHECK(q.reductions[1].groups.group_count() == 3);
  std::string b;
  EncodePartial(q, &b);
  CHECK(a == b);
  OpenedPartial opened;
  REQUIRE(OpenPartial(a, &opened).ok());
  CHECK(opened.reductions.size() == 2);
  PartialState one(&first);
  Status refused = DecodePartial(a, &one);
  CHECK(refused.code() == Status::Code::kCorrupt);
  CHECK(refused.message() == "partial state has 2 reductions; expected 1");
}
