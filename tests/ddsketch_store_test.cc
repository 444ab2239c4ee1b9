// DDSketchStore: rank lookup, the fold past kMaxSpan, and strict decoding.
#include "common/ddsketch_store.h"

#include <doctest/doctest.h>

#include <string>

namespace fanfold {
namespace {

std::string EncodeOf(const DDSketchStore& s) {
  std::string out;
  ByteWriter w(&out);
  s.Encode(w);
  return out;
}

// Intent: ranks map to buckets in ascending and descending order, with
// counts > 1 covering consecutive ranks.
TEST_CASE("ddsketch_store: rank lookup") {
  DDSketchStore s;
  s.Add(5, 2);   // ranks 0, 1
  s.Add(-3);     // below: rank 0 now
  s.Add(40, 3);  // ranks 3..5
  REQUIRE(s.total() == 6);
  CHECK(s.lo() == -3);
  CHECK(s.hi() == 40);
  const int32_t ascending[] = {-3, 5, 5, 40, 40, 40};
  for (uint64_t r = 0; r < 6; ++r) CHECK(s.IndexOfRank(r) == ascending[r]);
  for (uint64_t r = 0; r < 6; ++r) CHECK(s.IndexOfRankDescending(r) == ascending[5 - r]);
  CHECK(s.CountAt(5) == 2);
  CHECK(s.CountAt(6) == 0);
}

// Intent: a span past kMaxSpan folds the lowest buckets into the lowest kept
// one (index hi - kMaxSpan + 1), the same whether the high value comes
// first, last, or through a merge.
TEST_CASE("ddsketch_store: fold depends only on the highest index") {
  const int32_t top = DDSketchStore::kMaxSpan + 100;
  const int32_t floor_index = top - DDSketchStore::kMaxSpan + 1;  // 101
  DDSketchStore low_first, high_first, merged, part;
  for (int32_t i : {0, 50, 150}) low_first.Add(i);
  low_first.Add(top);
  high_first.Add(top);
  for (int32_t i : {150, 50, 0}) high_first.Add(i);
  merged.Add(0);
  merged.Add(150);
  part.Add(top);
  part.Add(50);
  merged.MergeFrom(part);
  CHECK(low_first.lo() == floor_index);
  CHECK(low_first.CountAt(floor_index) == 2);  // 0 and 50 folded
  CHECK(low_first.CountAt(150) == 1);
  CHECK(EncodeOf(high_first) == EncodeOf(low_first));
  CHECK(EncodeOf(merged) == EncodeOf(low_first));
}

// Intent: decoding rejects zero ends, spans past kMaxSpan, indices outside
// the clamp range and truncation; it accepts what Encode writes.
TEST_CASE("ddsketch_store: strict decoding") {
  auto decode = [](const std::string& bytes) {
    DDSketchStore s;
    ByteReader r(bytes);
    return s.Decode(r) && r.at_end();
  };
  DDSketchStore s;
  s.Add(-7, 3);
  s.Add(2);
  CHECK(decode(EncodeOf(s)));
  auto make = [](uint64_t span, uint64_t zigzag_lo, std::initializer_list<uint64_t> counts) {
    std::string out;
    ByteWriter w(&out);
    w.Varint(span);
    w.Varint(zigzag_lo);
    for (uint64_t c : counts) w.Varint(c);
    return out;
  };
  CHECK(decode(make(2, 4, {1, 1})));
  CHECK_FALSE(decode(make(2, 4, {0, 1})));  // zero first bucket
  CHECK_FALSE(decode(make(2, 4, {1, 0})));  // zero last bucket
  CHECK_FALSE(decode(make(2, 4, {1})));     // truncated
  CHECK_FALSE(decode(make(2, uint64_t{1} << 40, {1, 1})));  // index past kMaxIndex
  std::string wide;
  ByteWriter w(&wide);
  w.Varint(DDSketchStore::kMaxSpan + 1);
  w.Varint(0);
  for (int i = 0; i <= DDSketchStore::kMaxSpan; ++i) w.Varint(1);
  CHECK_FALSE(decode(wide));
}

}  // namespace
}  // namespace fanfold
