// BodyCompressor: a many-group partial compressed on the helper thread while
// its body is written is byte for byte the partial compressed in one call
// after it (the form every earlier fanfold wrote: one zstd level-1 frame
// declaring its size, checked here against libzstd's own one-call
// ZSTD_compress, outside our code), decodes, and falls back to the one-call
// path whenever a table's announced length is wrong.
#include "common/partial/body_compressor.h"

#include <doctest/doctest.h>
#include <zstd.h>

#include <string>
#include <vector>

#include "common/partial/group_key.h"
#include "common/partial/partial_codec.h"
#include "common/partial/worker_group_table.h"

namespace fanfold {
namespace {

std::vector<MeasureConfig> CountAndSum() {
  std::vector<MeasureConfig> c(2);
  c[0].kind = MeasureKind::kCount;
  c[1].kind = MeasureKind::kSum;
  return c;
}

// `groups` groups of count and sum over 3 records each on average, keys of
// varied lengths (some of 128 bytes and more: a two-byte length).
void FillTable(WorkerGroupTable* t, size_t groups, uint64_t seed) {
  uint64_t x = seed;
  auto next = [&x] { return x = x * 6364136223846793005ULL + 1442695040888963407ULL; };
  std::vector<uint32_t> ids;
  std::vector<Value> args;
  for (size_t i = 0; i < 3 * groups; ++i) {
    std::string key;
    const uint64_t k = (next() >> 20) % groups;
    AppendKeyValue(Value::String("device-" + std::to_string(k * 7919)), &key);
    if (k % 97 == 0) AppendKeyValue(Value::String(std::string(130, 'q')), &key);
    ids.push_back(t->FindOrAdd(key));
    args.push_back(k % 3 == 0 ? Value::Number(static_cast<double>(next() % 1000) / 8) : Value::Int(next() % 50000));
  }
  for (size_t m = 0; m < 2; ++m) REQUIRE(t->column(m).AddBatch(ids.data(), args.data(), 1, ids.size()) == ids.size());
}

// A one-reduction state whose groups are t's; `exact_delta` is added to the
// announced exact length (0: the true one).
// `order`, when set, is the table's StartOrder, as a worker passes it (a
// fallback writes the table a second time from the same, sorted, order).
void SetUp(PartialState* p, const WorkerGroupTable& t, int64_t exact_delta, KeyOrderStretches* order = nullptr) {
  p->header.shard_index = 3;
  p->header.records = 12345;
  p->field_present = {7, 9};
  ReductionPartial& r = p->reductions[0];
  r.kept = 12000;
  r.encode_groups = [&t, order](ByteWriter& w, const BodyProgress& progress) { t.Encode(w, progress, order); };
  r.encode_bytes_hint = t.EncodedBytesHint();
  r.encode_bytes_exact = static_cast<uint64_t>(static_cast<int64_t>(t.EncodedBytes()) + exact_delta);
}

}  // namespace

// Intent: the overlapped compression changes no byte, whatever the body's
// size (below and above kMinBytes), reusing one compressor.
TEST_CASE("body_compressor: a partial compressed while written equals the one compressed after") {
  const std::vector<MeasureConfig> configs = CountAndSum();
  BodyCompressor compressor;
  for (const size_t groups : {size_t{2000}, size_t{90000}, size_t{30000}}) {
    CAPTURE(groups);
    WorkerGroupTable t(&configs);
    FillTable(&t, groups, groups);
    std::string encoded;
    ByteWriter w(&encoded);
    t.Encode(w);
    CHECK(t.EncodedBytes() == encoded.size());
    PartialState p(&configs);
    SetUp(&p, t, 0);
    std::string after;
    std::string during;
    EncodePartial(p, &after);
    EncodePartial(p, &during, &compressor);
    CHECK(during == after);
    // The old form, made outside fanfold's code: libzstd's one-call level 1
    // over the body.
    std::string body;
    EncodePartialBody(p, &body);
    std::string frame(ZSTD_compressBound(body.size()), '\0');
    frame.resize(ZSTD_compress(frame.data(), frame.size(), body.data(), body.size(), 1));
    CHECK(std::string_view(during).substr(kPartialHeaderSize) == frame);
    PartialState q(&configs);
    REQUIRE(DecodePartial(during, &q).ok());
    CHECK(q.reductions[0].groups.group_count() == t.group_count());
    CHECK(q.reductions[0].kept == 12000);
    CHECK(q.field_present == p.field_present);
  }
}

// Intent: a wrong announced length (a bug in a table's count) never reaches
// the partial: the body is written again and compressed in one call, also
// when the table runs past the buffer's room (the compressor lets go of the
// buffer before it moves).
TEST_CASE("body_compressor: a wrong announced length falls back to the one-call path") {
  const std::vector<MeasureConfig> configs = CountAndSum();
  WorkerGroupTable t(&configs);
  FillTable(&t, 60000, 11);
  PartialState p(&configs);
  SetUp(&p, t, 0);
  std::string reference;
  EncodePartial(p, &reference);
  BodyCompressor compressor;
  for (const int64_t delta : {int64_t{-1}, int64_t{1}, int64_t{-600000}, int64_t{-1} << 20}) {
    CAPTURE(delta);
    std::unique_ptr<KeyOrderStretches> order = t.StartOrder();
    PartialState q(&configs);
    SetUp(&q, t, delta, delta % 2 == 0 ? order.get() : nullptr);
    std::string out;
    EncodePartial(q, &out, &compressor);
    CHECK(out == reference);
  }
  // And the compressor is fine for the next body.
  std::string again;
  EncodePartial(p, &again, &compressor);
  CHECK(again == reference);
}

// Intent: a truncated or altered compressed body is still a clear error.
TEST_CASE("body_compressor: a cut or altered partial is refused") {
  const std::vector<MeasureConfig> configs = CountAndSum();
  WorkerGroupTable t(&configs);
  FillTable(&t, 60000, 5);
  PartialState p(&configs);
  SetUp(&p, t, 0);
  BodyCompressor compressor;
  std::string good;
  EncodePartial(p, &good, &compressor);
  {
    PartialState q(&configs);
    const Status s = DecodePartial(std::string_view(good).substr(0, good.size() - 1), &q);
    CHECK(s.code() == Status::Code::kCorrupt);
    CHECK(s.message().find("partial state body") != std::string::npos);
  }
  {
    std::string bad = good;
    bad[bad.size() / 2] ^= 0x20;
    PartialState q(&configs);
    const Status s = DecodePartial(bad, &q);
    CHECK(s.code() == Status::Code::kCorrupt);
    CHECK(s.message().find("checksum") != std::string::npos);
  }
}

}  // namespace fanfold
