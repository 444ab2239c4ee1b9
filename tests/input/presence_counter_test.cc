// Tests for PresenceCounter: per raw field, the records that had a value.
#include "common/input/presence_counter.h"

#include <vector>

#include <doctest/doctest.h>

using namespace fanfold;

// Intent: null counts as present, Missing does not, derived slots are not
// counted, and batches add up (records of width 3, end to end, as a
// RecordBatch holds them).
TEST_CASE("presence counter: counts raw fields with a value") {
  FieldTable fields;
  fields.InternField("/a");
  fields.AddDerived("d");
  fields.InternField("/b");
  PresenceCounter counter(fields);
  const Value rows[9] = {Value::Number(1),  Value::Number(9),  Value::Missing(),    // record 1
                         Value::Null(),     Value::Missing(),  Value::String("x"),  // record 2
                         Value::Missing(),  Value::Number(2),  Value::Missing()};   // record 3
  counter.CountRows(rows, 2);
  CHECK(counter.counts() == std::vector<uint64_t>{2, 1});
  counter.CountRows(rows + 3, 2);  // records 2 and 3: a second batch
  CHECK(counter.counts() == std::vector<uint64_t>{3, 2});
  counter.CountRows(rows, 0);  // an empty batch
  CHECK(counter.counts() == std::vector<uint64_t>{3, 2});
}

// Intent: batches of any length (four rows a step, then the rest) count
// each record once: 0 to 11 records of width 3, /a present in every
// record whose number is not a multiple of 3, /b in the even ones (counted
// here by hand, record by record).
TEST_CASE("presence counter: batches of every length up to 11") {
  FieldTable fields;
  fields.InternField("/a");
  fields.AddDerived("d");
  fields.InternField("/b");
  std::vector<Value> rows;
  for (int r = 0; r < 11; ++r) {
    rows.push_back(r % 3 != 0 ? Value::Number(r) : Value::Missing());
    rows.push_back(Value::Number(1));  // derived: never counted
    rows.push_back(r % 2 == 0 ? Value::Null() : Value::Missing());
  }
  for (size_t n = 0; n <= 11; ++n) {
    CAPTURE(n);
    PresenceCounter counter(fields);
    counter.CountRows(rows.data(), n);
    uint64_t a = 0, b = 0;
    for (size_t r = 0; r < n; ++r) {
      a += r % 3 != 0 ? 1 : 0;
      b += r % 2 == 0 ? 1 : 0;
    }
    CHECK(counter.counts() == std::vector<uint64_t>{a, b});
  }
}
