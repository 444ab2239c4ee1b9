// Regression tests for bugs the fuzzers found in the DDSketch decoders
// (tests/fuzz/fuzz_partial_decode.cc, mode 3).
#include <doctest/doctest.h>

#include <cstdint>
#include <initializer_list>
#include <string>

#include "common/base/byte_io.h"
#include "common/measures/sketches/ddsketch_store.h"
#include "common/measures/measure.h"

using namespace fanfold;

namespace {

// A store encoding: varint span, varint zigzag lowest index, the counts.
std::string StoreBytes(uint64_t span, uint64_t zigzag_lo, std::initializer_list<uint64_t> counts) {
  std::string out;
  ByteWriter w(&out);
  w.Varint(span);
  w.Varint(zigzag_lo);
  for (uint64_t c : counts) w.Varint(c);
  return out;
}

bool Decodes(const std::string& bytes) {
  DDSketchStore s;
  ByteReader r(bytes);
  return s.Decode(r) && r.at_end();
}

uint64_t ZigZagOf(int64_t v) { return (static_cast<uint64_t>(v) << 1) ^ static_cast<uint64_t>(v >> 63); }

}  // namespace

// Intent: a lowest index near INT64_MAX is rejected; the range check used to
// compute lo + span - 1 and overflow (UBSan: signed integer overflow in
// DDSketchStore::Decode), after which the store accepted it with its
// indices truncated to int32.
TEST_CASE("regression: DDSketchStore::Decode with a lowest index near INT64_MAX") {
  CHECK_FALSE(Decodes(StoreBytes(10, ZigZagOf(INT64_MAX), {1, 1, 1, 1, 1, 1, 1, 1, 1, 1})));
  CHECK_FALSE(Decodes(StoreBytes(1, ZigZagOf(INT64_MAX), {1})));
  CHECK_FALSE(Decodes(StoreBytes(2, ZigZagOf(INT64_MIN), {1, 1})));
}

// Intent: the bounds stay where the header says: the highest index may be
// exactly kMaxIndex and the lowest exactly kMinIndex, one past is rejected.
TEST_CASE("regression: DDSketchStore::Decode accepts exactly the index range") {
  const int64_t top = DDSketchStore::kMaxIndex, bottom = DDSketchStore::kMinIndex;
  CHECK(Decodes(StoreBytes(2, ZigZagOf(top - 1), {1, 1})));
  CHECK_FALSE(Decodes(StoreBytes(2, ZigZagOf(top), {1, 1})));
  CHECK(Decodes(StoreBytes(1, ZigZagOf(bottom), {1})));
  CHECK_FALSE(Decodes(StoreBytes(1, ZigZagOf(bottom - 1), {1})));
}

// Intent: the fuzzer's input itself (an ddsketch state: skipped,
// zero count, then a negative store with that index) gives an error.
TEST_CASE("regression: ddsketch state from fuzz_partial_decode") {
  const std::string bytes("\x80\x2d\xff\xff\x01\x0a\xfe\xff\xff\xff\xff\xff\xff\xff\xff\x0b\x00\x36\x40", 19);
  MeasureConfig c;
  c.kind = MeasureKind::kDdSketch;
  c.probabilities = {0.5};
  std::unique_ptr<MeasureState> s = NewMeasureState(c);
  ByteReader r(bytes);
  CHECK_FALSE(s->Decode(r).ok());
}
