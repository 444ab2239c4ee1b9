// Tests for RecordBatch: records copied out of a reader keep their values,
// strings included, after the reader's buffer has moved on.
#include <doctest/doctest.h>

#include <string>

#include "common/partial/record_batch.h"

using namespace fanfold;

TEST_CASE("a batch keeps every slot and its own copy of each string") {
  // Intent: the reader overwrites its buffer after each record; the batched
  // records still read what was added, in order, until Clear().
  RecordBatch batch(3);
  std::string buffer;
  for (size_t i = 0; i < RecordBatch::kCapacity; ++i) {
    CHECK(!batch.full());
    buffer = "text " + std::to_string(i) + std::string(i % 7, 'x');
    Value slots[3] = {Value::String(buffer), Value::Int(static_cast<int64_t>(i)), Value::Missing()};
    batch.Add(slots);
    buffer.assign(buffer.size(), '#');  // the reader's next record
  }
  CHECK(batch.full());
  CHECK(batch.size() == RecordBatch::kCapacity);
  for (size_t i = 0; i < batch.size(); ++i) {
    const Value* r = batch.record(i);
    CHECK(r[0].kind == ValueKind::kString);
    CHECK(r[0].str == "text " + std::to_string(i) + std::string(i % 7, 'x'));
    CHECK(r[1].is_integer());
    CHECK(r[1].Wide() == static_cast<WideInt>(i));
    CHECK(r[2].is_missing());
  }
  batch.Clear();
  CHECK(batch.size() == 0);
  CHECK(!batch.full());
}

TEST_CASE("a string longer than the arena's block survives in the batch") {
  // Intent: oversized strings get memory of their own, not a cut copy.
  RecordBatch batch(1);
  std::string big(200000, 'q');
  Value v = Value::String(big);
  batch.Add(&v);
  big.assign(big.size(), '-');
  CHECK(batch.record(0)[0].str == std::string(200000, 'q'));
}

TEST_CASE("records with long strings fill a batch early") {
  // Intent: 200 kB strings fill the batch at the sixth record (6 x 200,000
  // bytes >= 1 MiB), not at the 256th: memory stays bounded by the budget.
  RecordBatch batch(1);
  std::string big(200000, 'q');
  Value v = Value::String(big);
  size_t added = 0;
  while (!batch.full()) {
    batch.Add(&v);
    ++added;
  }
  CHECK(added == 6);
  batch.Clear();
  CHECK(!batch.full());
}

TEST_CASE("a batch of records without fields counts them") {
  // Intent: a job that reads no field (a bare count) has zero slots per
  // record; the batch still fills up and empties, touching no slot.
  RecordBatch batch(0);
  for (size_t i = 0; i < RecordBatch::kCapacity; ++i) batch.Add(nullptr);
  CHECK(batch.full());
  batch.Clear();
  CHECK(batch.size() == 0);
}
