// The NDJSON reader building records in a buffer the sink offers
// (RecordSink::RecordBuffer): the same records as in the reader's own slots.
#include <string>
#include <vector>

#include <doctest/doctest.h>

#include "tests/input/ndjson_test_util.h"

namespace fanfold {
namespace {

// A sink that offers the reader a buffer (RecordSink::RecordBuffer), each
// time filled with junk first, and checks it gets that buffer back.
class BufferSink : public Collect {
 public:
  explicit BufferSink(size_t n) : Collect(n), buffer_(n) {}
  Value* RecordBuffer() override {
    for (Value& v : buffer_) v = Value::String("junk");
    ++offers;
    return buffer_.data();
  }
  bool OnRecord(Value* slots) override {
    if (slots != buffer_.data()) ++foreign;
    return Collect::OnRecord(slots);
  }
  size_t offers = 0;
  size_t foreign = 0;

 private:
  std::vector<Value> buffer_;
};

TEST_CASE("records built in the sink's buffer equal those built in the reader's slots") {
  // Reference: the reader's own slots (checked against Python's json module
  // in ndjson_checks_test.cc); lines malformed in between leave a partly
  // filled buffer that the next line must not see.
  FieldTable f = Fields({"/k", "/s", "/n/x", "/a/1"});
  const std::string input =
      "{\"k\":1,\"s\":\"one\",\"n\":{\"x\":true},\"a\":[0,\"b\"]}\n"
      "{\"k\":2,\"s\":\"two\",\"n\":{\"x\":\n"           // malformed after filling /k and /s
      "{\"s\":\"t\\u00e9\",\"z\":[1,2]}\n"                  // /k, /n/x, /a/1 missing
      "{\"k\":3,\"a\":[1,null],\"k\":4}\n"                   // duplicate key: first wins
      "{\"k\":5,\"s\":\"x\",\"bad\":01}\n"                  // malformed only under kEveryValue
      "\n"
      "{\"n\":{\"x\":-0.5e1}}\n";
  for (ValueChecks checks : {ValueChecks::kReadValues, ValueChecks::kEveryValue}) {
    CAPTURE(checks == ValueChecks::kEveryValue);
    Outcome plain = Run(f, input, kDefaultChunkBytes, ChunkOptions{}.max_record_bytes, checks);
    REQUIRE(plain.status.ok());
    auto reader = NdjsonReader::Create(f, ChunkOptions{}, checks);
    REQUIRE(reader.ok());
    auto src = MemorySource(input);
    BufferSink sink(f.size());
    ReadStats st;
    REQUIRE((*reader)->Read(*src, sink, &st).ok());
    CHECK(sink.rows == plain.rows);
    CHECK(st.records == plain.stats.records);
    CHECK(st.malformed == plain.stats.malformed);
    CHECK(sink.foreign == 0);
    CHECK(sink.offers == st.records + st.malformed);  // one offer a non-blank line
    CHECK(plain.rows.size() == (checks == ValueChecks::kEveryValue ? 4u : 5u));
  }
}

}  // namespace
}  // namespace fanfold
