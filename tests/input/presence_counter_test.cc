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
