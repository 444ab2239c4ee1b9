// Tests for PresenceCounter: per raw field, the records that had a value.
#include "common/input/presence_counter.h"

#include <vector>

#include <doctest/doctest.h>

#include "common/input/record_reader.h"

using namespace fanfold;

namespace {

// Counts the records it is handed and stops after `stop_after`.
class Count final : public RecordSink {
 public:
  explicit Count(uint64_t stop_after) : stop_after_(stop_after) {}
  bool OnRecord(Value*) override { return ++n < stop_after_; }
  uint64_t n = 0;

 private:
  uint64_t stop_after_;
};

}  // namespace

// Intent: null counts as present, Missing does not, derived slots are not
// counted, and the next sink's "stop" is passed back.
TEST_CASE("presence counter: counts raw fields with a value") {
  FieldTable fields;
  fields.InternField("/a");
  fields.AddDerived("d");
  fields.InternField("/b");
  Count next(3);
  PresenceCounter counter(fields, &next);
  Value r1[3] = {Value::Number(1), Value::Number(9), Value::Missing()};
  Value r2[3] = {Value::Null(), Value::Missing(), Value::String("x")};
  CHECK(counter.OnRecord(r1));
  CHECK(counter.OnRecord(r2));
  Value r3[3] = {Value::Missing(), Value::Missing(), Value::Missing()};
  CHECK_FALSE(counter.OnRecord(r3));  // the third record: the next sink says stop
  CHECK(next.n == 3);
  CHECK(counter.counts() == std::vector<uint64_t>{2, 1});
}
